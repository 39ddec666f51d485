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

// Whether `frame` names at least max(min_markers, 4) of the body's markers: enough for a
// PnP pose (EstimateFramePoses skips the others).
bool CanPoseFrame(const FrameSightings& frame, const Body& body, int min_markers);

// Poses of the frames with at least `min_markers` sightings; others are skipped.
std::vector<BodyPose> EstimateFramePoses(const std::vector<FrameSightings>& frames,
                                         const Body& body, const Camera& camera,
                                         int min_markers);

// Closed-form first pass (constant spin). Throws DataError when fewer than 3 frames are
// posed.
FlightParameters InitialiseFlight(const std::vector<BodyPose>& poses, double t0_s,
                                  const FitOptions& options);

// Step 3 alone: r0, v0, c (and g when estimated) given the body's orientation at each
// posed frame; p->t0_s must be set.
void SolveTranslationAndCm(const std::vector<BodyPose>& poses,
                           const std::vector<Eigen::Matrix3d>& world_from_body,
                           const FitOptions& options, FlightParameters* p);

// Start of a torque-free model (symmetric or free top) from the posed frames and the
// constant-spin start `spin` (same t0):
// 1. body angular velocities w_k from neighbouring poses; the inertia tensor J (up to
//    scale) and the world angular momentum L from the linear conditions R_k J w_k = L
//    (conservation of angular momentum), the null vector of the stacked system; J's
//    eigenvectors and eigenvalues give the principal axes and moment ratios. When the
//    data leave J undetermined (a spin about a fixed axis) the start is a spin about a
//    principal axis along the constant-spin start's axis, which predicts the same motion.
// 2. the rotation alone fitted to the poses' orientations by Ceres over windows growing
//    from the middle of the flight outwards (the torque-free motion is strongly nonlinear
//    in its parameters over many turns).
// 3. the translation and the CM by SolveTranslationAndCm.
// `held`: principal axes and moments held fixed instead.
// A symmetric top's start from a free top's parameters: the axis whose moment differs
// most from the other two becomes the symmetry axis, the other two moments their mean.
FlightParameters SymmetricStart(const FlightParameters& free_top);

FlightParameters InitialiseTorqueFree(const std::vector<BodyPose>& poses,
                                      const FlightParameters& spin, RotationModel model,
                                      const FitOptions& options);

// A torque-free model's start that predicts exactly the motion of the constant-spin
// parameters `spin`: a steady spin about the largest principal axis, set along the spin
// axis (an equilibrium of Euler's equations whatever the other two moments), with
// moments (0.7, 0.9, 1) (the symmetric top: (0.8, 0.8, 1)). The torque-free model
// contains the constant spin so; a fit from here ends no worse than the constant spin.
FlightParameters SteadySpinStart(const FlightParameters& spin, RotationModel model,
                                 const FitOptions& options);

}  // namespace tumbletrace
