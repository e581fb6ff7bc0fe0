package sim

import (
	"math"
	"testing"
)

// Published ISA / U.S. Standard Atmosphere 1976 values at geopotential
// altitude (REFERENCES.md section 2).
func TestISATable(t *testing.T) {
	for _, c := range []struct{ h, tk, p, rho float64 }{
		{0, 288.15, 101325.0, 1.22500},
		{500, 284.90, 95460.8, 1.16727},
		{1000, 281.65, 89874.6, 1.11164},
		{1500, 278.40, 84556.0, 1.05807},
		{2000, 275.15, 79495.2, 1.00649},
	} {
		p := isaPressure(c.h)
		if math.Abs(p-c.p) > 1 {
			t.Errorf("p(%g) = %.1f, want %.1f", c.h, p, c.p)
		}
		if tk := isaTemperature(c.h); math.Abs(tk-c.tk) > 1e-9 {
			t.Errorf("T(%g) = %.3f, want %.2f", c.h, tk, c.tk)
		}
		if rho := airDensity(p, isaTemperature(c.h)-kelvin0); math.Abs(rho-c.rho) > 2e-5 {
			t.Errorf("rho(%g) = %.5f, want %.5f", c.h, rho, c.rho)
		}
		if h := pressureAltitude(c.p); math.Abs(h-c.h) > 0.2 {
			t.Errorf("pressure altitude of %.1f Pa = %.2f m, want %g", c.p, h, c.h)
		}
	}
}

// Momentum-theory computed example (REFERENCES.md section 3): a 1.5 kg quad
// with D = 0.254 m needs T = 3.677494 N per rotor and P_ideal = 20.0155 W per
// rotor at rho = 1.225, 22.0815 W at rho = 1.00649 (2000 m).
func TestHoverIdealPower(t *testing.T) {
	for _, c := range []struct{ elev, tempC, perRotor float64 }{
		{0, 15, 20.0155},
		{2000, 2, 22.0815},
	} {
		s := quietSpec(1)
		s.SiteElevationM, s.TempC = c.elev, c.tempC
		tr, err := Estimate(s)
		if err != nil {
			t.Fatal(err)
		}
		if got := tr.WeightN / 4; math.Abs(got-3.677494) > 1e-6 {
			t.Errorf("thrust per rotor = %.6f N, want 3.677494", got)
		}
		if got := tr.HoverIdealPowerW / 4; math.Abs(got-c.perRotor) > 2e-3 {
			t.Errorf("elev %g: P_ideal per rotor = %.4f W, want %.4f", c.elev, got, c.perRotor)
		}
	}
}

// In level cruise with no control activity and no bias, the electrical power
// in the log is the computed example's ideal power over FM * eta plus the
// avionics: 4 * 20.0155 / (0.55 * 0.8) + 10 = 191.96 W.
func TestLevelFlightPower(t *testing.T) {
	s := quietSpec(3)
	s.SiteElevationM, s.TempC, s.ControlActivity = 0, 15, 0
	tr, log := generate(t, s)
	pl := parseLog(t, log)
	ts, v, i := pl.col(t, "t_s"), pl.col(t, "pack_v"), pl.col(t, "pack_a")
	acc := pl.col(t, "acc_z")
	want := 4*20.0155/(0.55*0.8) + 10
	n := 0
	for r := range ts {
		if ts[r] > tr.TakeoffOffsetS+30 && ts[r] < tr.LandingOffsetS-60 && math.Abs(acc[r]-g0) < 1e-3 {
			if p := v[r] * i[r]; relErr(p, want) > 5e-4 {
				t.Fatalf("t=%.3f: P = %.3f W, want %.3f", ts[r], p, want)
			}
			n++
		}
	}
	if n < 1000 {
		t.Fatalf("only %d level-flight samples", n)
	}
}
