package telemetry

import "math"

// Standard atmosphere constants (ISO 2533 / ICAO Doc 7488 / U.S. Standard
// Atmosphere 1976, troposphere).
const (
	G0     = 9.80665  // standard gravity, m/s^2
	P0     = 101325.0 // sea-level pressure, Pa
	T0     = 288.15   // sea-level temperature, K
	Rho0   = 1.225    // sea-level density, kg/m^3
	RDry   = 287.053  // specific gas constant of dry air, J/(kg K)
	Lapse  = 0.0065   // temperature lapse rate, K/m
	isaH   = 44330.77 // T0 / Lapse, m
	isaExp = 5.255876 // g0 / (R Lapse)
	kelvin = 273.15
)

// PressureAltitude is the standard-atmosphere geopotential altitude (m) at
// static pressure pa (Pa); valid in the troposphere (below 11 km).
func PressureAltitude(pa float64) float64 {
	return isaH * (1 - math.Pow(pa/P0, 1/isaExp))
}

// ISAPressure is the standard-atmosphere pressure (Pa) at geopotential altitude h (m).
func ISAPressure(h float64) float64 {
	return P0 * math.Pow(1-h/isaH, isaExp)
}

// ISATemperature is the standard-atmosphere temperature (K) at geopotential altitude h (m).
func ISATemperature(h float64) float64 {
	return T0 - Lapse*h
}

// ISADensity is the standard-atmosphere air density (kg/m^3) at geopotential altitude h (m).
func ISADensity(h float64) float64 {
	return ISAPressure(h) / (RDry * ISATemperature(h))
}

// AirDensity is the density (kg/m^3) of dry air at pressure pa (Pa) and
// temperature tempC (deg C), by the ideal-gas law rho = p / (R_d T).
func AirDensity(pa, tempC float64) float64 {
	return pa / (RDry * (tempC + kelvin))
}

// IdealHoverPower is the ideal induced power (W) of one rotor of diameter
// diameterM (m) producing thrustN (N) in air of density rho (kg/m^3), by
// momentum theory: P = T^1.5 / sqrt(2 rho A), A = pi D^2 / 4.
func IdealHoverPower(thrustN, rho, diameterM float64) float64 {
	a := math.Pi * diameterM * diameterM / 4
	return math.Pow(thrustN, 1.5) / math.Sqrt(2*rho*a)
}

// air picks the air density: measured when baro and temperature exist
// (over the airborne span, from the samples with both), else ISA.
func (a *analysis) air() {
	l, m := a.l, a.m
	if a.baro != nil && a.temp != nil {
		rho := make([]float64, l.Rows)
		for i := range rho {
			rho[i] = AirDensity(a.baro[i], a.temp[i]) // NaN where either is blank
		}
		lo, hi := a.span()
		if d := meanOver(l.T, rho, lo, hi); d == d {
			m.AirDensity, m.AirDensitySource = d, "baro_temp"
			return
		}
		a.note("no sample in the span has both baro_pa and temp_c: air density is the standard atmosphere's at the site elevation")
	}
	m.AirDensity, m.AirDensitySource = ISADensity(a.p.SiteElevationM), "isa_site_elevation"
}

// altitude is the greatest pressure altitude above the take-off reference: the
// median before the airborne span, else over the first second of the log.
// Readings only: a blank takes no part.
func (a *analysis) altitude() {
	l := a.l
	if l.Baro == nil {
		return
	}
	var ref []float64
	for i, pa := range l.Baro {
		if pa == pa && ((a.lo > 0 && i < a.lo) || (a.lo <= 0 && l.T[i]-l.T[0] <= 1)) {
			ref = append(ref, PressureAltitude(pa))
		}
	}
	if len(ref) == 0 {
		a.note("no baro_pa reading before take-off (or in the log's first second): height above take-off is not computed")
		return
	}
	// Pressure altitude falls as pressure rises: the highest point is at
	// the least pressure read, so one conversion serves (not one a sample).
	least := math.Inf(1)
	for _, pa := range l.Baro {
		if pa < least {
			least = pa
		}
	}
	a.m.MaxAltM = ptr(PressureAltitude(least) - median(ref))
}
