// The phases of a simulated throw: held by the hand before release, free flight (through
// air when the scenario says so), and the flight after a bounce. Advancing a state across
// a boundary switches the equations of motion there, and applies the bounce.
#pragma once

#include "tumbletrace/model/mass_properties.hpp"
#include "tumbletrace/sim/motion.hpp"
#include "tumbletrace/sim/scenario.hpp"

namespace tumbletrace {

class FlightPhases {
 public:
  FlightPhases(const Scenario& scenario, const MassProperties& mass);

  // The state at t_to_s from the state at t_from_s (either direction).
  RigidState Advance(const RigidState& state, double t_from_s, double t_to_s) const;

 private:
  RigidState Bounce(const RigidState& state, bool forwards) const;

  Scenario scenario_;
  RigidBodyIntegrator hand_;
  RigidBodyIntegrator free_;
};

}  // namespace tumbletrace
