// The flight through air: the integrator against the closed form of a vertical fall with
// quadratic drag, and the trajectory's derivatives against central differences.
#include "tumbletrace/fit/aero.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "tumbletrace/fit/aero_trajectory.hpp"

namespace tumbletrace {
namespace {

// A fall from rest with quadratic drag: v(t) = -v_t tanh(g t / v_t), the drop
// (v_t^2 / g) ln cosh(g t / v_t), terminal speed v_t = sqrt(g / k) (any mechanics text;
// from memory, checked here by the equation it solves).
TEST(AeroTest, VerticalFallMatchesTheClosedForm) {
  const double g = 9.80665, k = 0.04;
  const double vt = std::sqrt(g / k);
  AeroInputs<double> in;
  for (int i = 0; i < 3; ++i) in.v0[i] = in.g[i] = in.w[i] = 0.0;
  in.g[2] = -g;
  in.k = k;
  in.k_lift = 0.0;
  const std::vector<double> taus = {0.1, 0.5, 1.0, 2.0};
  const auto states = PropagateAero(in, taus);
  for (size_t i = 0; i < taus.size(); ++i) {
    const double x = g * taus[i] / vt;
    EXPECT_NEAR(states[i].v[2], -vt * std::tanh(x), 1e-10) << taus[i];
    EXPECT_NEAR(states[i].dr[2], -vt * vt / g * std::log(std::cosh(x)), 1e-10) << taus[i];
  }
}

// Backwards in time the same equations hold: going back from the forward state returns
// to the start.
TEST(AeroTest, ForwardThenBackwardReturnsToTheStart) {
  AeroInputs<double> in{{7.0, 0.5, 3.0}, {0, 0, -9.81}, 0.03, 0.002, {0, 20, 5}};
  in.wind[0] = 1.5;
  const auto out = PropagateAero(in, {0.4});
  AeroInputs<double> back = in;
  for (int i = 0; i < 3; ++i) back.v0[i] = out[0].v[i];
  const auto home = PropagateAero(back, {-0.4});
  for (int i = 0; i < 3; ++i) {
    EXPECT_NEAR(home[0].v[i], in.v0[i], 1e-11);
    EXPECT_NEAR(home[0].dr[i], -out[0].dr[i], 1e-11);
  }
}

// The Magnus term turns the velocity without changing the speed: with no gravity and no
// drag the speed stays constant and the path is a circle of radius |v| / (k_L |w|).
TEST(AeroTest, LiftAloneTurnsThePathOnACircle) {
  AeroInputs<double> in{{10.0, 0, 0}, {0, 0, 0}, 0.0, 0.01, {0, 0, 50.0}};
  const double radius = 10.0 / (0.01 * 50.0);
  const double quarter = 0.5 * M_PI * radius / 10.0;
  const auto out = PropagateAero(in, {quarter});
  EXPECT_NEAR(std::hypot(out[0].v[0], out[0].v[1]), 10.0, 1e-9);
  EXPECT_NEAR(out[0].dr[0], radius, 1e-7);
  EXPECT_NEAR(out[0].dr[1], radius, 1e-7);
}

// The Jet sensitivities of the trajectory against central differences of the plain
// integration, for every input and the clock offset.
TEST(AeroTrajectoryTest, SensitivitiesMatchCentralDifferences) {
  const std::vector<double> taus = {-0.12, -0.03, 0.0, 0.05, 0.11};
  const std::array<double, 3> wind = {0.8, -0.3, 0.0};
  AeroTrajectory trajectory(taus, wind);
  const double inputs[AeroTrajectory::kInputs] = {6.0, 0.4, 2.5, 0.1, -0.2, -9.8,
                                                  0.035, 0.004, 3.0, 25.0, -1.0};
  const double offset = 2e-4;
  trajectory.Update(inputs, offset);
  const auto plain = [&](const double* x, double off, int sample) {
    AeroInputs<double> in;
    for (int i = 0; i < 3; ++i) {
      in.v0[i] = x[i];
      in.g[i] = x[3 + i];
      in.w[i] = x[8 + i];
      in.wind[i] = wind[i];
    }
    in.k = x[6];
    in.k_lift = x[7];
    std::vector<double> t(taus);
    for (double& v : t) v += off;
    return PropagateAero(in, t)[sample];
  };
  for (int sample = 0; sample < static_cast<int>(taus.size()); ++sample) {
    const AeroTrajectory::Sample& s = trajectory.sample(sample);
    for (int j = 0; j <= AeroTrajectory::kInputs; ++j) {
      double up[AeroTrajectory::kInputs], down[AeroTrajectory::kInputs];
      std::copy_n(inputs, AeroTrajectory::kInputs, up);
      std::copy_n(inputs, AeroTrajectory::kInputs, down);
      const double h = 1e-6;
      double off_up = offset, off_down = offset;
      if (j < AeroTrajectory::kInputs) {
        up[j] += h;
        down[j] -= h;
      } else {
        off_up += h;
        off_down -= h;
      }
      const auto a = plain(up, off_up, sample), b = plain(down, off_down, sample);
      for (int i = 0; i < 3; ++i) {
        const double numeric = (a.dr[i] - b.dr[i]) / (2 * h);
        const double analytic = j < AeroTrajectory::kInputs ? s.ddr[i][j] : s.v[i];
        EXPECT_NEAR(analytic, numeric, 1e-7 * std::max(1.0, std::abs(numeric)))
            << "sample " << sample << " input " << j << " component " << i;
      }
    }
  }
}

}  // namespace
}  // namespace tumbletrace
