package telemetry

import (
	"math"
	"testing"
)

// Standard atmosphere table, REFERENCES.md section 2 (published USSA-1976 /
// ISA values, geopotential altitude).
var isaTable = []struct{ h, tK, p, rho float64 }{
	{0, 288.15, 101325.0, 1.22500},
	{500, 284.90, 95460.8, 1.16727},
	{1000, 281.65, 89874.6, 1.11164},
	{1500, 278.40, 84556.0, 1.05807},
	{2000, 275.15, 79495.2, 1.00649},
}

func TestStandardAtmosphereTable(t *testing.T) {
	for _, r := range isaTable {
		// Tolerances: the table's last printed digit.
		if got := ISATemperature(r.h); math.Abs(got-r.tK) > 0.005 {
			t.Errorf("T(%g) = %.3f, want %.2f (ISA table)", r.h, got, r.tK)
		}
		if got := ISAPressure(r.h); math.Abs(got-r.p) > 0.1 {
			t.Errorf("p(%g) = %.2f, want %.1f (ISA table)", r.h, got, r.p)
		}
		if got := ISADensity(r.h); math.Abs(got-r.rho) > 1e-5 {
			t.Errorf("rho(%g) = %.6f, want %.5f (ISA table)", r.h, got, r.rho)
		}
		// Pressure altitude of the tabulated pressure: the 0.05 Pa rounding of
		// the table is worth under 0.01 m.
		if got := PressureAltitude(r.p); math.Abs(got-r.h) > 0.01 {
			t.Errorf("H(%g Pa) = %.4f m, want %g (ISA table)", r.p, got, r.h)
		}
		// Measured-density path: rho = p / (R T) with the table's p and T.
		if got := AirDensity(r.p, r.tK-273.15); math.Abs(got-r.rho) > 1e-5 {
			t.Errorf("AirDensity(%g, %g K) = %.6f, want %.5f (ISA table)", r.p, r.tK, got, r.rho)
		}
	}
}

func TestIdealHoverPower(t *testing.T) {
	// Computed example, REFERENCES.md section 3 (momentum theory, Leishman ch. 2):
	// 1.5 kg quad, D = 0.254 m: T = 3.677494 N per rotor, P_ideal = 20.0155 W at
	// rho 1.225 and 22.0815 W at rho 1.00649.
	thrust := 1.5 * G0 / 4
	if math.Abs(thrust-3.677494) > 1e-6 {
		t.Fatalf("thrust per rotor = %.7f, want 3.677494 (REFERENCES 3)", thrust)
	}
	for _, c := range []struct{ rho, want float64 }{{1.225, 20.0155}, {1.00649, 22.0815}} {
		if got := IdealHoverPower(thrust, c.rho, 0.254); math.Abs(got-c.want) > 5e-5 {
			t.Errorf("IdealHoverPower(rho %g) = %.5f W, want %.4f (REFERENCES 3)", c.rho, got, c.want)
		}
	}
}

func TestTrapezoidExactOnPiecewiseLinear(t *testing.T) {
	// The trapezoidal rule is exact for integrands linear between samples
	// (elementary numerical analysis); the areas below are by plane geometry.
	// y = 2t + 1 on an irregular grid over [0, 10]: integral = t^2 + t = 110.
	ts := []float64{0, 0.3, 1, 1.05, 4, 7.5, 10}
	ys := make([]float64, len(ts))
	for i, x := range ts {
		ys[i] = 2*x + 1
	}
	if got := Trapezoid(ts, ys); math.Abs(got-110) > 1e-12 {
		t.Errorf("linear: %v, want 110", got)
	}
	// A triangle pulse 0 -> 4 -> 0 over [1, 3] with kinks at samples, plus a
	// 1 s plateau of 2 over [5, 6]: 4 + 2 = 6.
	ts = []float64{0, 1, 2, 3, 5, 5.5, 6}
	ys = []float64{0, 0, 4, 0, 2, 2, 2}
	// From 3 to 5 the line rises 0 -> 2: area 2. Total 4 + 2 + 2 = 8.
	if got := Trapezoid(ts, ys); math.Abs(got-8) > 1e-12 {
		t.Errorf("piecewise: %v, want 8", got)
	}
	if got := Trapezoid([]float64{3}, []float64{7}); got != 0 {
		t.Errorf("single sample: %v, want 0", got)
	}
	defer func() {
		if recover() == nil {
			t.Errorf("length mismatch did not panic")
		}
	}()
	Trapezoid([]float64{1, 2}, []float64{1})
}
