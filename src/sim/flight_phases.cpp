#include "tumbletrace/sim/flight_phases.hpp"

#include <algorithm>
#include <vector>

namespace tumbletrace {
namespace {

// Steps short against both the frame interval and the spin: RK4's error per step grows
// as (w h)^5, far below 1e-12 rad at w h <= 0.005.
double MaxStep(const Scenario& s) {
  const double w = s.launch_omega_body_radps.norm();
  return std::min(0.1 / s.capture_fps, w > 0 ? 0.005 / w : 1.0);
}

RigidBodyIntegrator HandIntegrator(const Scenario& s, const MassProperties& mass) {
  const Eigen::Vector3d a = s.gravity_world_mps2 + (s.hand ? s.hand->acceleration_mps2 : Eigen::Vector3d::Zero());
  const Eigen::Vector3d alpha =
      s.hand ? s.hand->angular_acceleration_body_radps2 : Eigen::Vector3d::Zero();
  return RigidBodyIntegrator(
      mass.inertia_about_cm_kgm2,
      [a](const Eigen::Vector3d&, const Eigen::Vector3d&, const Eigen::Vector3d&) { return a; },
      MaxStep(s), alpha);
}

// Free flight: a = g - k |v_r| v_r + k_L (w x v_r), v_r = v - wind (the model of
// fit/aero.hpp, here with the body's true angular velocity at each instant).
RigidBodyIntegrator FreeIntegrator(const Scenario& s, const MassProperties& mass) {
  const Eigen::Vector3d g = s.gravity_world_mps2;
  const ScenarioAero air = s.aero;
  return RigidBodyIntegrator(
      mass.inertia_about_cm_kgm2,
      [g, air](const Eigen::Vector3d&, const Eigen::Vector3d& v, const Eigen::Vector3d& w) {
        const Eigen::Vector3d vr = v - air.wind_world_mps;
        return Eigen::Vector3d(g - air.k_per_m * vr.norm() * vr + air.k_lift * w.cross(vr));
      },
      MaxStep(s));
}

}  // namespace

FlightPhases::FlightPhases(const Scenario& scenario, const MassProperties& mass)
    : scenario_(scenario), hand_(HandIntegrator(scenario, mass)), free_(FreeIntegrator(scenario, mass)) {}

RigidState FlightPhases::Bounce(const RigidState& state, bool forwards) const {
  const ScenarioImpact& impact = *scenario_.impact;
  const Eigen::Vector3d n = impact.normal_world;
  RigidState out = state;
  const double vn = state.velocity_world_mps.dot(n);
  // Forwards: v_n' = -e v_n, w' = kept w. Backwards: the inverse.
  const double vn_new = forwards ? -impact.restitution * vn : -vn / impact.restitution;
  out.velocity_world_mps += (vn_new - vn) * n;
  out.omega_body_radps *= forwards ? impact.spin_kept : 1.0 / impact.spin_kept;
  return out;
}

RigidState FlightPhases::Advance(const RigidState& state, double t_from_s, double t_to_s) const {
  const double release = scenario_.hand ? scenario_.hand->release_time_s : -1e300;
  const double impact = scenario_.impact ? scenario_.impact->time_s : 1e300;
  std::vector<double> cuts;
  for (double b : {release, impact}) {
    if (b > std::min(t_from_s, t_to_s) && b < std::max(t_from_s, t_to_s)) cuts.push_back(b);
  }
  const bool forwards = t_to_s >= t_from_s;
  std::sort(cuts.begin(), cuts.end());
  if (!forwards) std::reverse(cuts.begin(), cuts.end());
  cuts.push_back(t_to_s);
  RigidState s = state;
  double t = t_from_s;
  for (double next : cuts) {
    const double mid = 0.5 * (t + next);
    const RigidBodyIntegrator& integrator = mid < release ? hand_ : free_;
    s = integrator.Advance(s, next - t);
    if (next == impact) s = Bounce(s, forwards);
    // (crossing the release changes only the equations, not the state)
    t = next;
  }
  return s;
}

}  // namespace tumbletrace
