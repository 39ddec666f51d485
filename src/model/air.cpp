#include "tumbletrace/model/air.hpp"

#include <fmt/format.h>

#include <cmath>

namespace tumbletrace {
namespace {

constexpr double kKelvinOffset = 273.15;
// ICAO standard atmosphere at sea level (ICAO Doc 7488; U.S. Standard Atmosphere 1976).
constexpr double kStandardTemperatureC = 15.0;
constexpr double kStandardPressurePa = 101325.0;

}  // namespace

double SaturationVapourPressureCipm2007(double temperature_k) {
  // p_sv = 1 Pa exp(A T^2 + B T + C + D / T) (CIPM-2007, eq. A1.3; the CIPM-81/91 fit).
  constexpr double A = 1.2378847e-5, B = -1.9121316e-2, C = 33.93711047, D = -6.3431645e3;
  const double t = temperature_k;
  return std::exp(A * t * t + B * t + C + D / t);
}

double AirDensityCipm2007(double temperature_c, double pressure_pa, double relative_humidity,
                          double co2_mole_fraction) {
  const double t = temperature_c;
  const double T = t + kKelvinOffset;
  const double p = pressure_pa;
  // Molar gas constant and molar masses (CIPM-2007, section 3 and eq. A1.2).
  constexpr double R = 8.314472;            // J/(mol K)
  constexpr double Mv = 18.01528e-3;        // kg/mol, water
  const double Ma = (28.96546 + 12.011 * (co2_mole_fraction - 0.0004)) * 1e-3;  // dry air
  // Enhancement factor f = alpha + beta p + gamma t^2 (eq. A1.4).
  const double f = 1.00062 + 3.14e-8 * p + 5.6e-7 * t * t;
  // Mole fraction of water vapour x_v = h f p_sv / p (eq. A1.5).
  const double xv = relative_humidity * f * SaturationVapourPressureCipm2007(T) / p;
  // Compressibility factor (eq. A1.6).
  constexpr double a0 = 1.58123e-6, a1 = -2.9331e-8, a2 = 1.1043e-10;
  constexpr double b0 = 5.707e-6, b1 = -2.051e-8, c0 = 1.9898e-4, c1 = -2.376e-6;
  constexpr double d = 1.83e-11, e = -0.765e-8;
  const double Z = 1.0 -
                   p / T * (a0 + a1 * t + a2 * t * t + (b0 + b1 * t) * xv + (c0 + c1 * t) * xv * xv) +
                   p * p / (T * T) * (d + e * xv * xv);
  // rho = p Ma / (Z R T) [1 - x_v (1 - Mv / Ma)] (eq. A1.1).
  return p * Ma / (Z * R * T) * (1.0 - xv * (1.0 - Mv / Ma));
}

double AirViscositySutherland(double temperature_k) {
  constexpr double beta = 1.458e-6, S = 110.4;
  return beta * std::pow(temperature_k, 1.5) / (temperature_k + S);
}

double AirSpec::TemperatureK() const {
  return temperature_c.value_or(kStandardTemperatureC) + kKelvinOffset;
}

double AirSpec::Density() const {
  if (density_kgpm3) return *density_kgpm3;
  return AirDensityCipm2007(temperature_c.value_or(kStandardTemperatureC),
                            pressure_pa.value_or(kStandardPressurePa),
                            relative_humidity.value_or(0.0), co2_mole_fraction);
}

double AirSpec::Viscosity() const { return AirViscositySutherland(TemperatureK()); }

std::string AirSpec::Describe() const {
  if (density_kgpm3) return fmt::format("{:.4f} kg/m^3 as given", *density_kgpm3);
  std::string assumed;
  if (!temperature_c) assumed += "temperature 15 degC, ";
  if (!pressure_pa) assumed += "pressure 101325 Pa, ";
  if (!relative_humidity) assumed += "dry air, ";
  std::string out = fmt::format(
      "{:.4f} kg/m^3 by the CIPM-2007 equation from {:.1f} degC, {:.0f} Pa, relative humidity "
      "{:.0f} %",
      Density(), TemperatureK() - kKelvinOffset, pressure_pa.value_or(kStandardPressurePa),
      100.0 * relative_humidity.value_or(0.0));
  if (!assumed.empty()) {
    assumed.resize(assumed.size() - 2);
    out += " (assumed, not given: " + assumed + ", the ICAO standard atmosphere at sea level)";
  }
  return out;
}

}  // namespace tumbletrace
