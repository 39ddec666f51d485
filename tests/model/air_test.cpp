#include "tumbletrace/model/air.hpp"

#include <gtest/gtest.h>

namespace tumbletrace {
namespace {

// Dry air at 0 degC and 101325 Pa: 1.293 kg/m^3 (a handbook value, e.g. CIBSE Guide C;
// common practice). The CIPM-2007 equation reproduces it to its quoted digits.
TEST(AirDensityTest, DryAirAtZeroCelsiusMatchesTheHandbookValue) {
  EXPECT_NEAR(AirDensityCipm2007(0.0, 101325.0, 0.0), 1.293, 0.0005);
}

// ICAO standard atmosphere at sea level: 15 degC, 101325 Pa, dry: 1.225 kg/m^3 (ICAO Doc
// 7488; U.S. Standard Atmosphere 1976). The standard atmosphere treats air as an ideal
// gas with a slightly older molar mass, so the two agree to about 5e-4 relative.
TEST(AirDensityTest, StandardAtmosphereAtSeaLevel) {
  EXPECT_NEAR(AirDensityCipm2007(15.0, 101325.0, 0.0) / 1.225, 1.0, 6e-4);
}

// The CIPM-2007 paper's worked conditions, 20 degC, 101325 Pa, 50 % relative humidity,
// x_CO2 = 0.0004: density 1.1993 kg/m^3 (Picard et al., Metrologia 45 (2008) 149,
// appendix; the digits are from memory, hence the tolerance of 1e-4 kg/m^3). The
// saturation vapour pressure at 20 degC, 2339.2 Pa, is the steam-table value (IAPWS-95,
// Wagner and Pruss 1993 — from memory); the CIPM fit agrees with it to 0.05 Pa.
TEST(AirDensityTest, Cipm2007WorkedConditions) {
  EXPECT_NEAR(SaturationVapourPressureCipm2007(293.15), 2339.2, 0.1);
  EXPECT_NEAR(AirDensityCipm2007(20.0, 101325.0, 0.5, 0.0004), 1.1993, 1e-4);
}

// Moist air is lighter than dry air at the same temperature and pressure, and the density
// scales nearly with p / T (the equation's structure, an ideal gas to 4e-4).
TEST(AirDensityTest, HumidityLowersAndPressureRaisesTheDensity) {
  EXPECT_LT(AirDensityCipm2007(22.0, 100000.0, 0.8), AirDensityCipm2007(22.0, 100000.0, 0.0));
  const double ratio = AirDensityCipm2007(20.0, 90000.0, 0.0) / AirDensityCipm2007(20.0, 100000.0, 0.0);
  EXPECT_NEAR(ratio, 0.9, 1e-4);
}

// Sea-level viscosity of the U.S. Standard Atmosphere 1976: 1.7894e-5 Pa s at 288.15 K
// (its table; from memory).
TEST(AirViscosityTest, SeaLevelStandardValue) {
  EXPECT_NEAR(AirViscositySutherland(288.15), 1.7894e-5, 0.0005e-5);
}

TEST(AirSpecTest, DescribesAssumedConditions) {
  AirSpec air;
  EXPECT_NEAR(air.Density(), AirDensityCipm2007(15.0, 101325.0, 0.0), 1e-12);
  EXPECT_NE(air.Describe().find("assumed"), std::string::npos);
  air.density_kgpm3 = 1.18;
  EXPECT_DOUBLE_EQ(air.Density(), 1.18);
  EXPECT_NE(air.Describe().find("as given"), std::string::npos);
}

}  // namespace
}  // namespace tumbletrace
