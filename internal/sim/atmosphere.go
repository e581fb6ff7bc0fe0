package sim

import "math"

// Standard atmosphere constants (ISO 2533 / U.S. Standard Atmosphere 1976,
// troposphere; see /work/shared/REFERENCES.md section 2).
const (
	g0        = 9.80665  // standard gravity, m/s^2
	isaP0     = 101325.0 // sea-level pressure, Pa
	isaT0     = 288.15   // sea-level temperature, K
	isaLapse  = 0.0065   // temperature lapse rate, K/m
	isaHScale = 44330.77 // m, from T0 / lapse
	isaExp    = 5.255876 // g0 / (R lapse)
	rDryAir   = 287.053  // specific gas constant of dry air, J/(kg K)
	kelvin0   = 273.15   // 0 deg C in K
)

// isaPressure is the standard-atmosphere static pressure (Pa) at geopotential
// height h (m), valid in the troposphere.
func isaPressure(h float64) float64 {
	return isaP0 * math.Pow(1-h/isaHScale, isaExp)
}

// isaTemperature is the standard-atmosphere temperature (K) at height h (m).
func isaTemperature(h float64) float64 { return isaT0 - isaLapse*h }

// airDensity is the ideal-gas density rho = p / (R T) of dry air.
func airDensity(p, tempC float64) float64 { return p / (rDryAir * (tempC + kelvin0)) }
