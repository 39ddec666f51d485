// Part formulas from the standard handbook tables (e.g. Gere, Mechanics of Materials,
// appendix on mass moments of inertia, "Composite bodies"): solid cylinder I_axis = m r^2 / 2, I_transverse = m (3 r^2 + h^2) / 12; box
// I_x = m (b^2 + c^2) / 12; solid sphere 2 m r^2 / 5.
#include "tumbletrace/model/mass_properties.hpp"

#include <gtest/gtest.h>

#include <Eigen/Geometry>
#include <cmath>
#include <numbers>
#include <random>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

constexpr double kPi = std::numbers::pi;

Part Cylinder(const Eigen::Vector3d& from_m, const Eigen::Vector3d& axis, double length_m,
              double diameter_m, double density_kgpm3) {
  Part part;
  part.shape = PartShape::kCylinder;
  part.from_body_m = from_m;
  part.axis_body = axis;
  part.length_m = length_m;
  part.diameter_m = diameter_m;
  part.density_kgpm3 = density_kgpm3;
  return part;
}

Part Box(const Eigen::Vector3d& center_m, const Eigen::Vector3d& size_m, double mass_kg) {
  Part part;
  part.shape = PartShape::kBox;
  part.center_body_m = center_m;
  part.size_m = size_m;
  part.mass_kg = mass_kg;
  return part;
}

Part PointMass(const Eigen::Vector3d& at_m, double mass_kg) {
  Part part;
  part.shape = PartShape::kPointMass;
  part.center_body_m = at_m;
  part.mass_kg = mass_kg;
  return part;
}

TEST(MassPropertiesTest, CylinderAlongX) {
  // The contract's example: a wooden handle 280 mm long, 30 mm across.
  const double r = 0.015, h = 0.28, rho = 700.0;
  const MassProperties props = PartMassProperties(
      Cylinder(Eigen::Vector3d::Zero(), Eigen::Vector3d::UnitX(), h, 2 * r, rho));
  const double m = rho * kPi * r * r * h;
  EXPECT_NEAR(props.mass_kg, m, 1e-15);
  EXPECT_TRUE(props.cm_body_m.isApprox(Eigen::Vector3d(0.14, 0, 0), 1e-15));
  EXPECT_NEAR(props.inertia_about_cm_kgm2(0, 0), m * r * r / 2, 1e-18);
  EXPECT_NEAR(props.inertia_about_cm_kgm2(1, 1), m * (3 * r * r + h * h) / 12, 1e-18);
  EXPECT_NEAR(props.inertia_about_cm_kgm2(2, 2), m * (3 * r * r + h * h) / 12, 1e-18);
  EXPECT_NEAR(props.inertia_about_cm_kgm2(0, 1), 0.0, 1e-18);
}

TEST(MassPropertiesTest, CylinderAlongAnOddAxis) {
  const Eigen::Vector3d axis = Eigen::Vector3d(1, -2, 2) / 3.0;
  const Eigen::Vector3d from(0.01, 0.02, 0.03);
  const double r = 0.02, h = 0.5, m = 1.3;
  Part part = Cylinder(from, axis, h, 2 * r, 1.0);
  part.density_kgpm3.reset();
  part.mass_kg = m;
  const MassProperties props = PartMassProperties(part);
  EXPECT_TRUE(props.cm_body_m.isApprox(from + axis * h / 2, 1e-15));
  const Eigen::Vector3d across = axis.unitOrthogonal();
  const Eigen::Matrix3d& inertia = props.inertia_about_cm_kgm2;
  EXPECT_NEAR(axis.dot(inertia * axis), m * r * r / 2, 1e-15);
  EXPECT_NEAR(across.dot(inertia * across), m * (3 * r * r + h * h) / 12, 1e-15);
  EXPECT_NEAR(across.dot(inertia * axis), 0.0, 1e-15);
}

TEST(MassPropertiesTest, BoxByDensity) {
  Part part = Box(Eigen::Vector3d(0.1, 0.2, 0.3), Eigen::Vector3d(0.2, 0.05, 0.01), 1.0);
  part.mass_kg.reset();
  part.density_kgpm3 = 2700.0;
  const MassProperties props = PartMassProperties(part);
  const double a = 0.2, b = 0.05, c = 0.01, m = 2700.0 * a * b * c;
  EXPECT_NEAR(props.mass_kg, m, 1e-15);
  EXPECT_EQ(props.cm_body_m, Eigen::Vector3d(0.1, 0.2, 0.3));
  const Eigen::Vector3d expected(m * (b * b + c * c) / 12, m * (a * a + c * c) / 12,
                                 m * (a * a + b * b) / 12);
  EXPECT_TRUE(props.inertia_about_cm_kgm2.isApprox(Eigen::Matrix3d(expected.asDiagonal()), 1e-14));
}

TEST(MassPropertiesTest, SolidSphere) {
  Part part;
  part.shape = PartShape::kSphere;
  part.center_body_m = Eigen::Vector3d(0, 0, -0.1);
  part.diameter_m = 0.0427;  // a golf ball's size
  part.density_kgpm3 = 1130.0;
  const MassProperties props = PartMassProperties(part);
  const double r = 0.0427 / 2, m = 1130.0 * 4.0 / 3.0 * kPi * r * r * r;
  EXPECT_NEAR(props.mass_kg, m, 1e-15);
  EXPECT_TRUE(props.inertia_about_cm_kgm2.isApprox(
      2.0 / 5.0 * m * r * r * Eigen::Matrix3d::Identity(), 1e-14));
}

TEST(MassPropertiesTest, TwoEqualPointMasses) {
  // Two masses m a distance d apart: CM halfway, I = 2 m (d/2)^2 = m d^2 / 2 about any
  // transverse axis through the CM, 0 about the line joining them.
  const double m = 0.25, d = 0.4;
  const MassProperties props = CombineParts(
      {PointMass(Eigen::Vector3d(0, 0, 0), m), PointMass(Eigen::Vector3d(d, 0, 0), m)});
  EXPECT_EQ(props.mass_kg, 2 * m);
  EXPECT_TRUE(props.cm_body_m.isApprox(Eigen::Vector3d(d / 2, 0, 0), 1e-15));
  EXPECT_NEAR(props.inertia_about_cm_kgm2(0, 0), 0.0, 1e-18);
  EXPECT_NEAR(props.inertia_about_cm_kgm2(1, 1), m * d * d / 2, 1e-16);
  EXPECT_NEAR(props.inertia_about_cm_kgm2(2, 2), m * d * d / 2, 1e-16);
}

// A cylinder along x and a box off its axis; the combination is computed here term by term
// with the scalar parallel-axis formulas, I_xx = sum(I_xx,i + m_i (dy_i^2 + dz_i^2)) and
// I_xy = -sum(m_i dx_i dy_i), independently of the tensor form in the library.
TEST(MassPropertiesTest, CylinderAndBoxComposite) {
  const double r = 0.015, h = 0.28, rho = 700.0;
  const double m_cyl = rho * kPi * r * r * h;
  const Eigen::Vector3d c_cyl(0.14, 0.0, 0.0);
  const double i_cyl_axis = m_cyl * r * r / 2, i_cyl_trans = m_cyl * (3 * r * r + h * h) / 12;
  const double a = 0.06, b = 0.04, c = 0.02, m_box = 0.45;
  const Eigen::Vector3d c_box(0.3, 0.01, -0.005);
  const double i_box_x = m_box * (b * b + c * c) / 12, i_box_y = m_box * (a * a + c * c) / 12,
               i_box_z = m_box * (a * a + b * b) / 12;

  const double m = m_cyl + m_box;
  const Eigen::Vector3d cm = (m_cyl * c_cyl + m_box * c_box) / m;
  const Eigen::Vector3d d_cyl = c_cyl - cm, d_box = c_box - cm;
  auto sq = [](double x) { return x * x; };
  Eigen::Matrix3d expected;
  expected(0, 0) = i_cyl_axis + m_cyl * (sq(d_cyl.y()) + sq(d_cyl.z())) + i_box_x +
                   m_box * (sq(d_box.y()) + sq(d_box.z()));
  expected(1, 1) = i_cyl_trans + m_cyl * (sq(d_cyl.x()) + sq(d_cyl.z())) + i_box_y +
                   m_box * (sq(d_box.x()) + sq(d_box.z()));
  expected(2, 2) = i_cyl_trans + m_cyl * (sq(d_cyl.x()) + sq(d_cyl.y())) + i_box_z +
                   m_box * (sq(d_box.x()) + sq(d_box.y()));
  expected(0, 1) = expected(1, 0) =
      -(m_cyl * d_cyl.x() * d_cyl.y() + m_box * d_box.x() * d_box.y());
  expected(0, 2) = expected(2, 0) =
      -(m_cyl * d_cyl.x() * d_cyl.z() + m_box * d_box.x() * d_box.z());
  expected(1, 2) = expected(2, 1) =
      -(m_cyl * d_cyl.y() * d_cyl.z() + m_box * d_box.y() * d_box.z());

  const MassProperties props =
      CombineParts({Cylinder(Eigen::Vector3d::Zero(), Eigen::Vector3d::UnitX(), h, 2 * r, rho),
                    Box(c_box, Eigen::Vector3d(a, b, c), m_box)});
  EXPECT_NEAR(props.mass_kg, m, 1e-15);
  EXPECT_LT((props.cm_body_m - cm).norm(), 1e-15);
  EXPECT_LT((props.inertia_about_cm_kgm2 - expected).cwiseAbs().maxCoeff(), 1e-15);
  EXPECT_TRUE(props.inertia_about_cm_kgm2.isApprox(props.inertia_about_cm_kgm2.transpose()));
}

TEST(MassPropertiesTest, SinglePartCombinesToItself) {
  const Part box = Box(Eigen::Vector3d(1, 2, 3), Eigen::Vector3d(0.1, 0.2, 0.3), 2.0);
  const MassProperties one = PartMassProperties(box), combined = CombineParts({box});
  EXPECT_EQ(combined.mass_kg, one.mass_kg);
  EXPECT_TRUE(combined.cm_body_m.isApprox(one.cm_body_m, 1e-15));
  EXPECT_TRUE(combined.inertia_about_cm_kgm2.isApprox(one.inertia_about_cm_kgm2, 1e-15));
}

TEST(MassPropertiesTest, EmptyOrMasslessListsAreRefused) {
  EXPECT_THROW(CombineParts({}), InputError);
  EXPECT_THROW(CombineParts({PointMass(Eigen::Vector3d::Zero(), 0.0)}), InputError);
}

// The inertia of a box turned by R is R I R^T: its principal moments are the box's, sorted,
// and its principal axes the columns of R (up to sign and order).
TEST(PrincipalTest, RotatedBox) {
  std::mt19937 rng(31337u);
  std::normal_distribution<double> normal;
  const double a = 0.3, b = 0.1, c = 0.05, m = 1.7;
  // With a > b > c the box's moments about x, y, z are already ascending.
  const Eigen::Vector3d moments(m * (b * b + c * c) / 12, m * (a * a + c * c) / 12,
                                m * (a * a + b * b) / 12);
  for (int trial = 0; trial < 50; ++trial) {
    const Eigen::Matrix3d rotation =
        Eigen::Quaterniond(normal(rng), normal(rng), normal(rng), normal(rng))
            .normalized()
            .toRotationMatrix();
    const Eigen::Matrix3d inertia = rotation * moments.asDiagonal() * rotation.transpose();
    const PrincipalAxes principal = Principal(inertia);
    EXPECT_LT((principal.moments_kgm2 - moments).cwiseAbs().maxCoeff(), 1e-15);
    EXPECT_NEAR(principal.axes_body.determinant(), 1.0, 1e-12);
    for (int k = 0; k < 3; ++k) {
      EXPECT_NEAR(std::abs(principal.axes_body.col(k).dot(rotation.col(k))), 1.0, 1e-12)
          << "axis " << k << ", trial " << trial;
    }
    const Eigen::Matrix3d rebuilt =
        principal.axes_body * principal.moments_kgm2.asDiagonal() * principal.axes_body.transpose();
    EXPECT_LT((rebuilt - inertia).cwiseAbs().maxCoeff(), 1e-15);
  }
}

TEST(PrincipalTest, AscendingAndRightHandedForAxisAlignedInput) {
  // Moments given in descending order along x, y, z: the axes come back as z, y, x with one
  // sign flipped to keep the frame right-handed.
  const PrincipalAxes principal = Principal(Eigen::Vector3d(3.0, 2.0, 1.0).asDiagonal());
  EXPECT_EQ(principal.moments_kgm2, Eigen::Vector3d(1.0, 2.0, 3.0));
  EXPECT_NEAR(std::abs(principal.axes_body(2, 0)), 1.0, 1e-15);
  EXPECT_NEAR(std::abs(principal.axes_body(1, 1)), 1.0, 1e-15);
  EXPECT_NEAR(std::abs(principal.axes_body(0, 2)), 1.0, 1e-15);
  EXPECT_NEAR(principal.axes_body.determinant(), 1.0, 1e-15);
}

TEST(PrincipalTest, RepeatedMomentsStillGiveARotation) {
  // A sphere (all moments equal) and a symmetric top (two equal): any orthonormal axes do,
  // but they must form a rotation.
  for (const Eigen::Vector3d& moments :
       {Eigen::Vector3d(2.0, 2.0, 2.0), Eigen::Vector3d(1.0, 1.0, 0.4)}) {
    const PrincipalAxes principal = Principal(moments.asDiagonal());
    const Eigen::Matrix3d& axes = principal.axes_body;
    EXPECT_LT((axes.transpose() * axes - Eigen::Matrix3d::Identity()).norm(), 1e-14);
    EXPECT_NEAR(axes.determinant(), 1.0, 1e-14);
    EXPECT_LE(principal.moments_kgm2[0], principal.moments_kgm2[1]);
    EXPECT_LE(principal.moments_kgm2[1], principal.moments_kgm2[2]);
  }
}

}  // namespace
}  // namespace tumbletrace
