#include "tumbletrace/sim/board_poses.hpp"

#include <Eigen/Geometry>
#include <cmath>
#include <random>

#include "tumbletrace/sim/render_board.hpp"

namespace tumbletrace {

bool SheetInImage(const CalibrationTarget& target, const CameraIntrinsics& k,
                  const RigidTransform& camera_from_board, double margin_px) {
  const Eigen::Vector4d b = target.SheetBounds();
  const double half_x = 0.5 * k.width_px / k.fx_px, half_y = 0.5 * k.height_px / k.fy_px;
  const double field_r2 = 1.2 * 1.2 * (half_x * half_x + half_y * half_y);
  for (const Eigen::Vector2d& corner : {Eigen::Vector2d(b[0], b[1]), Eigen::Vector2d(b[2], b[1]),
                                        Eigen::Vector2d(b[2], b[3]), Eigen::Vector2d(b[0], b[3])}) {
    const Eigen::Vector3d p = camera_from_board.Apply(Eigen::Vector3d(corner.x(), corner.y(), 0));
    if (!(p.z() > 0) || (p.head<2>() / p.z()).squaredNorm() > field_r2) return false;
    Eigen::Vector2d pixel;
    if (!ProjectBoardPoint(Eigen::Vector3d(corner.x(), corner.y(), 0), k, camera_from_board, &pixel)) {
      return false;
    }
    if (pixel.x() < margin_px || pixel.y() < margin_px || pixel.x() > k.width_px - 1 - margin_px ||
        pixel.y() > k.height_px - 1 - margin_px) {
      return false;
    }
  }
  return true;
}

std::vector<RigidTransform> BoardPoses(const CalibrationTarget& target, const CameraIntrinsics& k,
                                       int count, double min_tilt_deg, double max_tilt_deg,
                                       std::uint64_t seed, double aim_span) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  const Eigen::Vector4d b = target.SheetBounds();
  const Eigen::Vector3d centre_board(0.5 * (b[0] + b[2]), 0.5 * (b[1] + b[3]), 0.0);
  std::vector<RigidTransform> poses;
  for (int i = 0; i < count; ++i) {
    const double tilt = (min_tilt_deg + (max_tilt_deg - min_tilt_deg) * unit(rng)) * M_PI / 180;
    const double axis_angle = 2 * M_PI * (0.618034 * i + 0.1 * unit(rng));
    const double roll = (40 * unit(rng) - 20) * M_PI / 180;
    const Eigen::Matrix3d rotation =
        (Eigen::AngleAxisd(tilt, Eigen::Vector3d(std::cos(axis_angle), std::sin(axis_angle), 0)) *
         Eigen::AngleAxisd(roll, Eigen::Vector3d::UnitZ()))
            .toRotationMatrix();
    // Aim at a point of a 5 x 4 grid over the image (jittered), as near as fits.
    const double aim_from = 0.5 - 0.5 * aim_span;
    double u = (aim_from + aim_span * ((i % 5) + 0.5 * unit(rng)) / 5.0) * k.width_px;
    double v = (aim_from + aim_span * (((i / 5) % 4) + 0.5 * unit(rng)) / 4.0) * k.height_px;
    if (i % 4 == 0 && aim_span < 0.7) {  // every fourth view towards a corner, in turn
      const int corner = (i / 4) % 4;
      u = (corner % 2 == 0 ? 0.22 : 0.78) * k.width_px;
      v = (corner / 2 == 0 ? 0.22 : 0.78) * k.height_px;
    }
    const Eigen::Vector3d ray((u - k.cx_px) / k.fx_px, (v - k.cy_px) / k.fy_px, 1.0);
    RigidTransform pose;
    pose.rotation = rotation;
    for (double distance = 0.35; distance < 5.0; distance *= 1.02) {
      pose.translation_m = distance * ray.normalized() - rotation * centre_board;
      if (SheetInImage(target, k, pose, 8.0)) break;
    }
    poses.push_back(pose);
  }
  return poses;
}

}  // namespace tumbletrace
