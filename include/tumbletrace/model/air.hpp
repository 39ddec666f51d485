// The air the body flies through: its density (CIPM-2007 equation for moist air) and its
// dynamic viscosity (Sutherland's law), for the drag coefficient and the Reynolds number.
#pragma once

#include <optional>
#include <string>

namespace tumbletrace {

// Density of moist air by the CIPM-2007 equation (Picard, Davis, Glaser, Fujii, Metrologia
// 45 (2008) 149-155), kg/m^3. Valid for 15-27 degC and 60-110 kPa (the equation's range;
// outside it the result is an extrapolation). `relative_humidity` in [0, 1];
// `co2_mole_fraction` typically 0.0004.
double AirDensityCipm2007(double temperature_c, double pressure_pa, double relative_humidity,
                          double co2_mole_fraction = 0.0004);

// Saturation vapour pressure of water over a plane liquid surface, the CIPM-2007 fit, Pa.
double SaturationVapourPressureCipm2007(double temperature_k);

// Dynamic viscosity of air, Sutherland's law with the U.S. Standard Atmosphere 1976
// constants: mu = beta T^1.5 / (T + S), beta = 1.458e-6 kg/(m s K^0.5), S = 110.4 K; Pa s.
double AirViscositySutherland(double temperature_k);

// The air as a session describes it: a density, or the conditions to compute it from.
// Absent conditions take the ICAO standard atmosphere at sea level (15 degC, 101325 Pa,
// dry), and the results say so.
struct AirSpec {
  std::optional<double> density_kgpm3;       // given directly
  std::optional<double> temperature_c;
  std::optional<double> pressure_pa;
  std::optional<double> relative_humidity;   // 0..1
  double co2_mole_fraction = 0.0004;

  double Density() const;
  double TemperatureK() const;
  double Viscosity() const;
  // Where the density comes from, in words ("given", "CIPM-2007 from 20.0 degC, ...").
  std::string Describe() const;
  bool Stated() const { return density_kgpm3 || temperature_c || pressure_pa || relative_humidity; }
};

}  // namespace tumbletrace
