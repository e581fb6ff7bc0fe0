package sim

import (
	"bytes"
	"math"
	"strings"
	"testing"
)

func TestDeterministic(t *testing.T) {
	s := DefaultSpec(42)
	s.DurationS = 300
	_, a := generate(t, s)
	_, b := generate(t, s)
	if !bytes.Equal(a, b) {
		t.Fatal("same seed gave different logs")
	}
	s.Seed = 43
	_, c := generate(t, s)
	if bytes.Equal(a, c) {
		t.Fatal("different seeds gave the same log")
	}
}

func TestSampleClock(t *testing.T) {
	for _, hz := range []float64{10, 50, 400} {
		s := DefaultSpec(5)
		s.DurationS, s.SampleHz = 240, hz
		s.Sampling = Sampling{JitterFrac: 0.4, DropoutProb: 0.002, MaxDropoutS: 0.5}
		tr, log := generate(t, s)
		pl := parseLog(t, log)
		ts := pl.col(t, "t_s")
		if ts[0] != 0 {
			t.Errorf("%g Hz: first t_s = %g, want 0", hz, ts[0])
		}
		var gaps int
		for i := 1; i < len(ts); i++ {
			if !(ts[i] > ts[i-1]) {
				t.Fatalf("%g Hz: t_s not increasing at row %d: %g after %g", hz, i, ts[i], ts[i-1])
			}
			if ts[i]-ts[i-1] > 1.5/hz {
				gaps++
			}
		}
		if ts[len(ts)-1] > s.DurationS {
			t.Errorf("%g Hz: last t_s %g beyond the duration", hz, ts[len(ts)-1])
		}
		if gaps == 0 || tr.Samples != len(ts) {
			t.Errorf("%g Hz: %d gaps, %d samples (truth says %d)", hz, gaps, len(ts), tr.Samples)
		}
		// Irregular: the spread of steps reflects the jitter.
		if n := float64(len(ts)) / s.DurationS; n > hz || n < 0.5*hz {
			t.Errorf("%g Hz: mean rate %.1f Hz", hz, n)
		}
	}
}

func TestColumnsAndMetadata(t *testing.T) {
	s := DefaultSpec(9)
	s.DurationS = 120
	s.Packs = append(s.Packs, s.Packs[0])
	s.Packs[1].Serial = "SIM-P2"
	for _, c := range []struct {
		cols Columns
		want string
	}{
		{ColumnsFull, "t_s,pack_v,pack_a,rpm_m1,rpm_m2,rpm_m3,rpm_m4,cell_1_v,cell_2_v,cell_3_v,cell_4_v,baro_pa,temp_c,acc_x,acc_y,acc_z,lat,lon"},
		{ColumnsThrottle, "t_s,pack_v,pack_a,throttle,cell_1_v,cell_2_v,cell_3_v,cell_4_v,baro_pa,temp_c,acc_x,acc_y,acc_z,lat,lon"},
		{ColumnsRequired, "t_s,pack_v,pack_a"},
	} {
		s.Columns = c.cols
		_, log := generate(t, s)
		lines := strings.SplitN(string(log), "\n", 5)
		if lines[0] != "# start: 2026-05-04T09:30:00Z" || lines[1] != "# airframe: SIM-01" ||
			lines[2] != "# packs: SIM-P1,SIM-P2" || lines[3] != c.want {
			t.Errorf("columns %d: header\n%s", c.cols, strings.Join(lines[:4], "\n"))
		}
		pl := parseLog(t, log)
		if c.cols == ColumnsThrottle {
			for _, v := range pl.col(t, "throttle") {
				if v < 0 || v > 1 {
					t.Fatalf("throttle %g outside 0..1", v)
				}
			}
		}
	}
}

// The truth is what a careful analysis of the noise-free log recovers.
func TestTruthFromQuietLog(t *testing.T) {
	s := quietSpec(11)
	s.MotorBias = []float64{0.12, 0, 0, 0}
	tr, log := generate(t, s)
	pl := parseLog(t, log)
	ts, v, i := pl.col(t, "t_s"), pl.col(t, "pack_v"), pl.col(t, "pack_a")
	vi := make([]float64, len(v))
	for r := range v {
		vi[r] = v[r] * i[r]
	}
	check := func(name string, got, want, tol float64) {
		t.Helper()
		t.Logf("%s: rel err %.2g (tolerance %.2g)", name, relErr(got, want), tol)
		if relErr(got, want) > tol {
			t.Errorf("%s: log gives %.6g, truth %.6g (rel err %.2g > %.2g)", name, got, want, relErr(got, want), tol)
		}
	}
	check("energy Wh", trapz(ts, vi)/3600, tr.EnergyWh, 1e-3)
	check("charge mAh", trapz(ts, i)/3.6, tr.ChargeMah, 1e-3)
	check("pack charge", tr.Packs[0].ChargeMah, tr.ChargeMah, 1e-9)

	// Hover: m g = N k rpm^2, and the mean thrust over the airborne time is the weight.
	check("hover rpm", float64(s.Rotors)*tr.ThrustK*tr.HoverRPM*tr.HoverRPM, s.MassKg*g0, 1e-12)
	check("mean thrust", tr.MeanThrustN, s.MassKg*g0, 5e-3)

	// Calibration without a thrust stand: k = m g / (N mean(rpm^2)) over the
	// airborne time (time-weighted over the irregular samples).
	var sum2 float64
	var air []float64
	rpm2 := make([][]float64, s.Rotors)
	for m := range s.Rotors {
		r := pl.col(t, "rpm_m"+string(rune('1'+m)))
		check("revolutions m"+string(rune('1'+m)), trapz(ts, r)/60, tr.Revolutions[m], 2e-3)
		for k := range r {
			r[k] *= r[k]
		}
		rpm2[m] = r
	}
	var at []float64
	for k := range ts {
		if ts[k] >= tr.TakeoffOffsetS && ts[k] <= tr.LandingOffsetS {
			at = append(at, ts[k])
			var s2 float64
			for m := range s.Rotors {
				s2 += rpm2[m][k]
			}
			air = append(air, s2/float64(s.Rotors))
		}
	}
	sum2 = trapz(at, air) / (at[len(at)-1] - at[0])
	check("calibrated k", s.MassKg*g0/(float64(s.Rotors)*sum2), tr.ThrustK, 5e-3)
	// The planted weak motor spins faster by sqrt(1 + bias).
	r1, r2 := pl.col(t, "rpm_m1"), pl.col(t, "rpm_m2")
	check("weak motor ratio", trapz(ts, r1)/trapz(ts, r2), tr.Revolutions[0]/tr.Revolutions[1], 1e-3)
	check("weak motor hover rpm", tr.MotorHoverRPM[0], tr.HoverRPM*math.Sqrt(1+0.12-0.03), 1e-9)

	// Mean vertical acceleration over the airborne time is about zero.
	az := pl.col(t, "acc_z")
	var ats, aza []float64
	for k := range ts {
		if ts[k] > tr.TakeoffOffsetS && ts[k] < tr.LandingOffsetS {
			ats, aza = append(ats, ts[k]), append(aza, az[k]-g0)
		}
	}
	if m := trapz(ats, aza) / (ats[len(ats)-1] - ats[0]); math.Abs(m) > 0.01 {
		t.Errorf("mean vertical acceleration %.4f m/s^2", m)
	}

	// Touchdown peak.
	ax, ay := pl.col(t, "acc_x"), pl.col(t, "acc_y")
	var peak float64
	for k := range az {
		peak = math.Max(peak, math.Sqrt(ax[k]*ax[k]+ay[k]*ay[k]+az[k]*az[k]))
	}
	check("landing g", peak/g0, tr.LandingG, 1e-3)

	// Rest voltages and height.
	check("rest V start", v[0], tr.RestVStart, 1e-4)
	check("rest V end", v[len(v)-1], tr.RestVEnd, 1e-4)
	baro := pl.col(t, "baro_pa")
	var maxH float64
	for _, p := range baro {
		maxH = math.Max(maxH, pressureAltitude(p)-s.SiteElevationM)
	}
	if math.Abs(maxH-tr.MaxHeightM) > 0.3 {
		t.Errorf("max height from baro %.2f m, truth %.2f", maxH, tr.MaxHeightM)
	}

	// Per-cell voltages sum to the pack voltage (pure series string).
	var cellSum float64
	for c := range s.Packs[0].CellsS {
		cellSum += pl.col(t, "cell_"+string(rune('1'+c))+"_v")[len(v)/2]
	}
	if math.Abs(cellSum-v[len(v)/2]) > 2e-3 {
		t.Errorf("cells sum to %.4f V, pack reads %.3f V", cellSum, v[len(v)/2])
	}
}

// DC resistance: R = -dV/dI across the logged current steps recovers the
// pack resistance (the two-point d.c. method of IEC 61960, as quoted in
// REFERENCES.md section 4), and the terminal solve reproduces that section's
// computed check: 0.4 A at 3.900 V and 2.0 A at 3.840 V for R = 37.5 mOhm.
func TestTerminalAndStepResistance(t *testing.T) {
	e := 3.900 + 0.4*0.0375
	for _, c := range []struct{ p, v, i float64 }{{3.900 * 0.4, 3.900, 0.4}, {3.840 * 2.0, 3.840, 2.0}} {
		v, i, err := terminal(e, 0.0375, c.p)
		if err != nil || math.Abs(v-c.v) > 1e-12 || math.Abs(i-c.i) > 1e-12 {
			t.Errorf("terminal(P=%.3f) = %.6f V, %.6f A, %v; want %.3f V, %.1f A", c.p, v, i, err, c.v, c.i)
		}
	}
	if _, _, err := terminal(e, 0.0375, 1000); err == nil {
		t.Error("an impossible power gave no error")
	}
	s := quietSpec(13)
	tr, log := generate(t, s)
	pl := parseLog(t, log)
	r := medianStepResistance(pl.col(t, "t_s"), pl.col(t, "pack_v"), pl.col(t, "pack_a"))
	t.Logf("step resistance %.3f mOhm, truth %.3f", r*1000, tr.IRmOhm)
	if relErr(r*1000, tr.IRmOhm) > 0.02 {
		t.Errorf("step resistance %.2f mOhm, truth %.2f", r*1000, tr.IRmOhm)
	}
}

// medianStepResistance is -dV/dI over neighbouring samples with a current
// step above 1.5 A.
func medianStepResistance(ts, v, i []float64) float64 {
	var rs []float64
	for k := 1; k < len(ts); k++ {
		if di := i[k] - i[k-1]; math.Abs(di) > 1.5 && ts[k]-ts[k-1] < 0.05 {
			rs = append(rs, -(v[k]-v[k-1])/di)
		}
	}
	if len(rs) == 0 {
		return math.NaN()
	}
	sortFloats(rs)
	return rs[len(rs)/2]
}

func TestSpecErrors(t *testing.T) {
	for name, mod := range map[string]func(*FlightSpec){
		"no packs":       func(s *FlightSpec) { s.Packs = nil },
		"odd rotors":     func(s *FlightSpec) { s.Rotors = 5 },
		"bias length":    func(s *FlightSpec) { s.MotorBias = []float64{0.1} },
		"chemistry":      func(s *FlightSpec) { s.Packs[0].Chemistry = "nicd" },
		"too short":      func(s *FlightSpec) { s.DurationS = 40 },
		"nan mass":       func(s *FlightSpec) { s.MassKg = math.NaN() },
		"pack too small": func(s *FlightSpec) { s.Packs[0].RatedMah = 1500 },
		"mixed cells": func(s *FlightSpec) {
			s.Packs = append(s.Packs, s.Packs[0])
			s.Packs[1].CellsS = 6
		},
	} {
		s := DefaultSpec(1)
		s.Packs = append([]PackState(nil), s.Packs...)
		mod(&s)
		if _, err := Generate(s, &bytes.Buffer{}); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

// Changing only the noise leaves the sample clock and the truth alone.
func TestNoiseIndependentOfClock(t *testing.T) {
	s := DefaultSpec(21)
	s.DurationS = 200
	tr1, a := generate(t, s)
	s.Noise = Noise{}
	tr2, b := generate(t, s)
	ta, tb := parseLog(t, a).col(t, "t_s"), parseLog(t, b).col(t, "t_s")
	if len(ta) != len(tb) || ta[len(ta)/2] != tb[len(tb)/2] || tr1.EnergyWh != tr2.EnergyWh {
		t.Error("noise changed the clock or the truth")
	}
}

func BenchmarkGenerate30min50Hz(b *testing.B) {
	s := DefaultSpec(1)
	s.DurationS = 1800
	var buf bytes.Buffer
	for b.Loop() {
		buf.Reset()
		if _, err := Generate(s, &buf); err != nil {
			b.Fatal(err)
		}
	}
	b.SetBytes(int64(buf.Len()))
}

// Estimate's coarse grid stays within 0.1 % of Generate's truth.
func TestEstimateAgrees(t *testing.T) {
	s := DefaultSpec(31)
	fine, _ := generate(t, s)
	coarse, err := Estimate(s)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name     string
		got, ref float64
	}{
		{"charge", coarse.ChargeMah, fine.ChargeMah},
		{"energy", coarse.EnergyWh, fine.EnergyWh},
		{"revolutions", coarse.Revolutions[2], fine.Revolutions[2]},
		{"mean thrust", coarse.MeanThrustN, fine.MeanThrustN},
	} {
		if relErr(c.got, c.ref) > 1e-3 {
			t.Errorf("%s: estimate %.6g, generate %.6g", c.name, c.got, c.ref)
		}
	}
	if coarse.Samples != 0 || coarse.TakeoffOffsetS != fine.TakeoffOffsetS {
		t.Error("estimate differs in timeline or wrote samples")
	}
}

// Vibration: a sinusoid of amplitude VibrationLevel at hover on x has RMS
// amplitude / sqrt(2) however it aliases; a strike step multiplies it.
func TestVibration(t *testing.T) {
	s := quietSpec(41)
	s.VibrationLevel, s.ControlActivity = 0.8, 0
	s.VibrationStepAtS, s.VibrationStepFactor = 500, 3
	tr, log := generate(t, s)
	pl := parseLog(t, log)
	ts, ax, az := pl.col(t, "t_s"), pl.col(t, "acc_x"), pl.col(t, "acc_z")
	rms := func(from, to float64) float64 {
		var s2 float64
		var n int
		for k := range ts {
			if ts[k] > from && ts[k] < to && math.Abs(az[k]-g0) < 0.5 { // level flight, hover rpm
				s2 += ax[k] * ax[k]
				n++
			}
		}
		return math.Sqrt(s2 / float64(n))
	}
	before, after := rms(tr.TakeoffOffsetS+30, 500), rms(500, tr.LandingOffsetS-60)
	if relErr(before, 0.8/math.Sqrt2) > 0.05 || relErr(after/before, 3) > 0.05 {
		t.Errorf("vibration RMS %.3f before, %.3f after the step (want %.3f, x3)", before, after, 0.8/math.Sqrt2)
	}
}

// The survey path is laid so that it takes exactly the cruise time at the
// stated speed.
func TestPathSpeed(t *testing.T) {
	for _, d := range []float64{120, 900, 2400} {
		s := DefaultSpec(51)
		s.DurationS = d
		s.applyDefaults()
		p, err := newPlan(&s, planRNG(s.Seed))
		if err != nil {
			t.Fatal(err)
		}
		if relErr(p.speed, s.CruiseSpeedMS) > 1e-9 || relErr(p.distance(), s.CruiseSpeedMS*(p.tc1-p.tc0)) > 1e-9 {
			t.Errorf("duration %g: speed %.6f m/s over %.1f m", d, p.speed, p.distance())
		}
	}
}
