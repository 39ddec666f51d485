// Camera rays of pixels through the Brown-Conrady lens: back through the forward model.
#include "tumbletrace/sim/lens_rays.hpp"

#include <gtest/gtest.h>

#include <random>
#include <stdexcept>

#include "support/scenarios.hpp"

namespace tumbletrace {
namespace {

Eigen::Vector2d Project(const CameraIntrinsics& k, const Eigen::Vector2d& n) {
  const double p[3] = {n.x(), n.y(), 1.0};
  Eigen::Vector2d px;
  ProjectCameraPoint(k, p, px.data());
  return px;
}

TEST(LensRays, CornersProjectBackOntoTheirPixels) {
  const CameraIntrinsics k = testing::ObliqueCamera().intrinsics;  // with distortion
  const LensRays lens(k, 0, 0, 40, 30);  // the corner of the image: the strongest distortion
  for (int j = 0; j <= 30; ++j) {
    for (int i = 0; i <= 40; ++i) {
      const Eigen::Vector2d px = Project(k, lens.Corner(i, j));
      EXPECT_NEAR(px.x(), i - 0.5, 1e-9);
      EXPECT_NEAR(px.y(), j - 0.5, 1e-9);
    }
  }
}

TEST(LensRays, PointsInsidePixelsProjectBackWithinATenThousandthOfAPixel) {
  const CameraIntrinsics k = testing::ObliqueCamera().intrinsics;
  const LensRays lens(k, 980, 720, 1024, 768);  // the far corner
  std::mt19937_64 rng(3);
  std::uniform_real_distribution<double> x(979.5, 1023.5), y(719.5, 767.5);
  for (int i = 0; i < 2000; ++i) {
    const Eigen::Vector2d pixel(x(rng), y(rng));
    const Eigen::Vector2d back = Project(k, lens.Normalised(pixel.x(), pixel.y()));
    EXPECT_LT((back - pixel).norm(), 1e-4) << pixel.transpose();
  }
}

TEST(LensRays, NewtonAgreesWithTheModelsUndistortion) {
  const CameraIntrinsics k = testing::SecondObliqueCamera().intrinsics;
  for (const Eigen::Vector2d pixel : {Eigen::Vector2d(0, 0), Eigen::Vector2d(1023, 767),
                                      Eigen::Vector2d(511.5, 383.5), Eigen::Vector2d(100, 700)}) {
    const Eigen::Vector2d pinhole((pixel.x() - k.cx_px) / k.fx_px, (pixel.y() - k.cy_px) / k.fy_px);
    EXPECT_LT((UndistortFrom(k, pixel, pinhole) - UndistortToNormalised(k, pixel)).norm(), 1e-12);
  }
}

TEST(LensRays, RefusesAnEmptyWindow) {
  const CameraIntrinsics k = testing::FacingCamera().intrinsics;
  EXPECT_THROW(LensRays(k, 10, 10, 10, 20), std::invalid_argument);
}

}  // namespace
}  // namespace tumbletrace
