// A starting point for the fit that needs no guess from the user.
//
// 1. Per-frame poses of the body from the identified markers by PnP (OpenCV's SQPnP,
//    refined by Levenberg-Marquardt), with the camera's pose taken out.
// 2. Constant angular velocity: the median of log(R_{k+1} R_k^T) / dt over consecutive
//    posed frames; R0 the quaternion mean of Exp(-w dt_k) R_k.
// 3. Closed form for the ballistic parameters and the CM: the body origin seen in frame
//    k is p_k = r0 + v0 dt_k + g dt_k^2 / 2 - R(t_k) c, linear in (r0, v0, c) (and g
//    when it is estimated); solved by least squares with the minimum-norm solution where
//    the data leave c undetermined (a spin about an axis fixed in space).
#pragma once

#include <vector>

#include "tumbletrace/fit/free_flight_fit.hpp"

namespace tumbletrace {

struct BodyPose {
  int frame = 0;
  double time_s = 0.0;
  Eigen::Matrix3d world_from_body = Eigen::Matrix3d::Identity();
  Eigen::Vector3d origin_world_m = Eigen::Vector3d::Zero();  // body-frame origin
  double rms_px = 0.0;
};

// Poses of the frames with at least `min_markers` sightings; others are skipped.
std::vector<BodyPose> EstimateFramePoses(const std::vector<FrameSightings>& frames,
                                         const Body& body, const Camera& camera,
                                         int min_markers);

// Closed-form first pass. Throws DataError when fewer than 3 frames are posed.
FlightParameters InitialiseFlight(const std::vector<BodyPose>& poses, double t0_s,
                                  const FitOptions& options);

}  // namespace tumbletrace
