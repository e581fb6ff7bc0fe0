package telemetry_test

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/internal/sim"
)

// mean_power_w is the airborne mean, as a technician reads it: the
// simulator's truth MeanPowerW is the mean electrical power over the
// airborne time (integral of V I on the noise-free signal). Tolerance 0.5 %,
// the acceptance criteria for charge and energy. The whole-log mean, rest
// on the ground included, is log_mean_power_w = energy / log duration
// (definition).
func TestSimTruthMeanPowerAirborne(t *testing.T) {
	for _, hz := range []float64{50, 10} {
		t.Run(fmt.Sprintf("%gHz", hz), func(t *testing.T) {
			t.Parallel()
			s := sim.DefaultSpec(31)
			s.SampleHz, s.DurationS = hz, 400
			tr, l := fly(t, s)
			m := analyze(t, l, flightParams(s, tr, cRating))
			if m.MeanPowerSource != "airborne" || math.Abs(m.MeanPowerW/tr.MeanPowerW-1) > tolChargeRel {
				t.Errorf("mean_power_w %.3f W (%s), truth airborne mean %.3f W", m.MeanPowerW, m.MeanPowerSource, tr.MeanPowerW)
			}
			if want := m.EnergyWh * 3600 / m.LogS; math.Abs(m.LogMeanPowerW/want-1) > 1e-9 {
				t.Errorf("log_mean_power_w %.6f W, energy / duration %.6f W", m.LogMeanPowerW, want)
			}
			// The log's rest and idle (about 20 of its 400 s) pull the
			// whole-log mean down.
			if !(m.LogMeanPowerW < 0.99*m.MeanPowerW) {
				t.Errorf("log mean %.1f W not below the airborne mean %.1f W", m.LogMeanPowerW, m.MeanPowerW)
			}
			t.Logf("airborne mean %.2f W (truth %.2f W), whole-log mean %.2f W", m.MeanPowerW, tr.MeanPowerW, m.LogMeanPowerW)
		})
	}
}

// Vibration against the sample rate, on the simulator's default quad: its
// rotors turn at about 85 Hz (hover rpm / 60), so at 10 and 50 Hz sampling
// the rotor vibration is above the Nyquist frequency and not resolvable (the
// analysis says so and gives the broadband figure without a peak); at 400 Hz
// it is resolvable and measured. The simulator writes the rotor-frequency
// vibration as amp sin and amp cos on x and y, amp = VibrationLevel
// (rpm/hover rpm)^2, with white noise of sd DefaultNoise().AccMS2 = 0.1 m/s^2
// on each axis: the RMS of x is sqrt(VibrationLevel^2 / 2 + 0.1^2) at hover
// (computed). Tolerance 5 %: in flight the amplitude follows thrust, T / (m g)
// = 1 + a/g, and the climbs, descents and doublets move its mean square by
// a few per cent.
func TestSimTruthVibrationBySampleRate(t *testing.T) {
	for _, hz := range []float64{10, 50, 400} {
		t.Run(fmt.Sprintf("%gHz", hz), func(t *testing.T) {
			t.Parallel()
			s := sim.DefaultSpec(32)
			s.SampleHz, s.DurationS = hz, 240
			tr, l := fly(t, s)
			m := analyze(t, l, flightParams(s, tr, cRating))
			v := m.Vibration
			if v == nil || v.X == nil || v.RotorHz == nil || v.RotorResolvable == nil {
				t.Fatalf("vibration %+v", v)
			}
			t.Logf("%g Hz: sample %.4g Hz, cut-off %.3g Hz, rotor %.4g Hz, resolvable %v, x %.4f m/s^2, peak %s Hz; %s",
				hz, v.SampleHz, v.CutoffHz, *v.RotorHz, *v.RotorResolvable, *v.X, fmtp(v.PeakHz), v.Caveat)
			if math.Abs(*v.RotorHz-tr.HoverRPM/60) > 0.05*tr.HoverRPM/60 {
				t.Errorf("rotor %.2f Hz, truth hover %.2f Hz", *v.RotorHz, tr.HoverRPM/60)
			}
			// The corner: at most a tenth of the Nyquist frequency, 2 Hz at most.
			if want := math.Min(2, v.SampleHz/20); math.Abs(v.CutoffHz-want) > 1e-12 {
				t.Errorf("cut-off %v Hz, want %v", v.CutoffHz, want)
			}
			if hz < 2*tr.HoverRPM/60 {
				want := fmt.Sprintf("rotor vibration not resolvable at %.3g Hz", v.SampleHz)
				if *v.RotorResolvable || v.PeakHz != nil || !strings.HasPrefix(v.Caveat, want) {
					t.Errorf("%g Hz: resolvable %v, peak %s, caveat %q; want %q", hz, *v.RotorResolvable, fmtp(v.PeakHz), v.Caveat, want)
				}
				return
			}
			want := math.Sqrt(s.VibrationLevel*s.VibrationLevel/2 + 0.1*0.1)
			if !*v.RotorResolvable || v.Caveat != "" || math.Abs(*v.X/want-1) > 0.05 || math.Abs(*v.Y/want-1) > 0.05 {
				t.Errorf("%g Hz: resolvable %v, x %.4f y %.4f, want %.4f ± 5 %%", hz, *v.RotorResolvable, *v.X, *v.Y, want)
			}
			// The strongest line is the rotor's, within the spread of rotor
			// speeds in flight (5 %).
			if v.PeakHz == nil || math.Abs(*v.PeakHz-*v.RotorHz) > 0.05**v.RotorHz {
				t.Errorf("peak %s Hz, rotor %.2f Hz", fmtp(v.PeakHz), *v.RotorHz)
			}
		})
	}
}

func fmtp(p *float64) string {
	if p == nil {
		return "null"
	}
	return fmt.Sprintf("%.4g", *p)
}
