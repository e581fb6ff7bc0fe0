package telemetry

import (
	"math"
	"math/rand/v2"
	"testing"
)

// irregularTimes samples [0, end] every step with uniform jitter of ±jitter
// of a step (seeded), leaving out the samples strictly inside the gaps.
func irregularTimes(end, step, jitter float64, gaps [][2]float64, seed uint64) []float64 {
	r := rand.New(rand.NewPCG(seed, 11))
	var t []float64
	for k := 0.0; k*step <= end+1e-9; k++ {
		v := k * step
		if v > 0 && v < end {
			v += step * jitter * (2*r.Float64() - 1)
		}
		in := false
		for _, g := range gaps {
			if v > g[0] && v < g[1] {
				in = true
			}
		}
		if !in {
			t = append(t, v)
		}
	}
	return t
}

// The defect: a long gap across a bin edge. The rpm ramps linearly
// from 1000 to 7000 rev/min over 60 s (100 rev/min per second), sampled
// irregularly with no sample between 19.0 and 21.5 s, where the rpm crosses
// 3000. The exact integral (computed): every 1000 rev/min bin from 1000 to
// 7000 holds 10 s and (k 1000 + 500) 10 / 60 revolutions. Handing half the
// gap to each end's bin would put 1.25 s each side of 3000 rev/min instead
// of 1.0 s and 1.5 s: 2.5 % of a bin moved.
func TestSpectrumLinearRampWithGap(t *testing.T) {
	ts := irregularTimes(60, 0.1, 0.4, [][2]float64{{19.0, 21.5}}, 1)
	ts = append(ts[:0:0], ts...)
	rpm := make([]float64, len(ts))
	for i, v := range ts {
		rpm[i] = 1000 + 100*v
	}
	k := 1e-7
	bins, ok := spectrum(ts, rpm, 1000, &k)
	if !ok || len(bins) != 6 || bins[0].RPMLo != 1000 {
		t.Fatalf("bins %+v", bins)
	}
	for _, b := range bins {
		mid := b.RPMLo + 500
		near(t, "seconds", &b.Seconds, 10, 1e-9, "exact integral of a linear ramp")
		near(t, "revolutions", &b.Revolutions, mid*10/60, 1e-9, "exact integral of a linear ramp")
		// Mean of rpm^2 over a bin of a linear ramp: (lo^2 + lo hi + hi^2) / 3.
		lo, hi := b.RPMLo, b.RPMHi
		near(t, "mean thrust", b.MeanThrustN, k*(lo*lo+lo*hi+hi*hi)/3, 1e-9, "exact integral of rpm^2")
	}
}

// A smooth duty on irregular sampling with gaps: rpm = 4000 + 2500
// sin(2 pi t / 20) over five periods. The share of a period with sin below u
// is 1/2 + asin(u)/pi, so the time in [a, b) is 100 (asin(u_b) - asin(u_a))/pi
// with u = (rpm - 4000)/2500 (exact). Tolerance 0.2 % of the time in a bin:
// between samples the rpm is taken as linear, which departs from the sine by
// at most r” dt^2 / 8 = 2500 (2 pi / 20)^2 0.6^2 / 8 = 11 rev/min over the
// longest (0.6 s) gaps (computed).
func TestSpectrumSmoothDutyIrregular(t *testing.T) {
	gaps := [][2]float64{{7.1, 7.7}, {33.2, 33.7}, {51.0, 51.6}, {88.8, 89.3}}
	ts := irregularTimes(100, 0.05, 0.45, gaps, 2)
	rpm := make([]float64, len(ts))
	for i, v := range ts {
		rpm[i] = 4000 + 2500*math.Sin(2*math.Pi*v/20)
	}
	bins, ok := spectrum(ts, rpm, 1000, nil)
	if !ok {
		t.Fatal("no spectrum")
	}
	var revs float64
	for _, b := range bins {
		u := func(r float64) float64 { return math.Max(-1, math.Min(1, (r-4000)/2500)) }
		want := 100 * (math.Asin(u(b.RPMHi)) - math.Asin(u(b.RPMLo))) / math.Pi
		if math.Abs(b.Seconds-want) > 0.002*want {
			t.Errorf("bin %v-%v: %.5f s, exact %.5f s", b.RPMLo, b.RPMHi, b.Seconds, want)
		}
		revs += b.Revolutions
	}
	// The bins' revolutions add up to the trapezoid of rpm/60, the motor's
	// revolutions, exactly; and that is within 0.01 % of the sine's exact
	// 4000 100 / 60 (whole periods).
	want := Trapezoid(ts, rpm) / 60
	if math.Abs(revs-want) > 1e-9*want || math.Abs(revs/(4000*100.0/60)-1) > 1e-4 {
		t.Errorf("bins hold %v rev, trapezoid %v, exact %v", revs, want, 4000*100.0/60)
	}
}
