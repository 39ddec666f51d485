// The camera's intrinsics in OpenCV's calib3d form (camera matrix and k1 k2 p1 p2 k3), for
// the modules that call OpenCV's pose solvers. Header-only: the model library itself does
// not link OpenCV.
#pragma once

#include <opencv2/core.hpp>

#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

inline cv::Mat OpenCvCameraMatrix(const CameraIntrinsics& k) {
  return (cv::Mat_<double>(3, 3) << k.fx_px, 0, k.cx_px, 0, k.fy_px, k.cy_px, 0, 0, 1);
}

inline cv::Mat OpenCvDistortion(const CameraIntrinsics& k) {
  return (cv::Mat_<double>(1, 5) << k.distortion[0], k.distortion[1], k.distortion[2],
          k.distortion[3], k.distortion[4]);
}

}  // namespace tumbletrace
