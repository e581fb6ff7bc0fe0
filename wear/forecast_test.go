package wear

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// Each candidate fitted to noise-free points of its own law recovers the
// law's parameters (the generating values, computed) from 40 points (every
// fifth cycle to 200), and its curve from 200 points, where the nonlinear
// fits work on the means of runs of four points (thin): the fits and the
// optimiser reach the least-squares solution.
func TestTrendModelsRecoverTheirLaws(t *testing.T) {
	cases := []struct {
		m    TrendModel
		want []float64
		tol  []float64
	}{
		{LinearModel, []float64{1.0, -0.001}, []float64{1e-12, 1e-14}},
		{SqrtModel, []float64{1.0, -0.0126}, []float64{1e-12, 1e-13}},
		{PowerModel, []float64{1.0, 2.4e-4, 1.3}, []float64{1e-4, 1e-5, 1e-3}},
		{PowerModel, []float64{2.0, 0.01, 0.6}, []float64{1e-4, 1e-4, 1e-3}},
		// Shape He et al. fit to the NASA cells: a slow decay plus a small
		// accelerating term.
		{DoubleExpModel, []float64{-0.01, 0.012, 1.01, -0.0004}, []float64{2e-3, 1e-3, 2e-3, 1e-4}},
	}
	law := func(m TrendModel, p []float64, step float64) (x, y []float64) {
		for n := step; n <= 200; n += step {
			x, y = append(x, n), append(y, m.Predict(p, n))
		}
		return x, y
	}
	for _, c := range cases {
		got, err := c.m.Fit(law(c.m, c.want, 5))
		if err != nil {
			t.Fatalf("%s: %v", c.m.Name, err)
		}
		for i := range c.want {
			if math.Abs(got[i]-c.want[i]) > c.tol[i] {
				t.Errorf("%s %s = %.6g, want %.6g ± %g", c.m.Name, c.m.Terms[i], got[i], c.want[i], c.tol[i])
			}
		}
		// The curve, which is what forecasts use, from 200 points to 1e-3
		// (the means of runs bend a law curved within a run by less).
		if got, err = c.m.Fit(law(c.m, c.want, 1)); err != nil {
			t.Fatalf("%s: %v", c.m.Name, err)
		}
		for _, n := range []float64{1, 100, 200, 300} {
			if d := math.Abs(c.m.Predict(got, n) - c.m.Predict(c.want, n)); d > 1e-3 {
				t.Errorf("%s at cycle %g off by %g", c.m.Name, n, d)
			}
		}
	}
}

func TestPowerExponentBounded(t *testing.T) {
	// A law with z = 2 lies outside the bounds: the fit stops at 1.5.
	var x, y []float64
	for n := 1.0; n <= 100; n++ {
		x, y = append(x, n), append(y, 1-1e-5*n*n)
	}
	p, err := PowerModel.Fit(x, y)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(p[2]-PowerZMax) > 1e-3 {
		t.Errorf("z = %v, want the bound %v", p[2], PowerZMax)
	}
}

func TestForecastNotEnoughHistory(t *testing.T) {
	fam := fadeFamilies[0]
	all := history(fam, 1, 0.003)
	// 14 points: below the minimum of 15.
	f, err := Forecast(all[:14], ForecastSettings{Threshold: 0.8})
	if err != nil {
		t.Fatal(err)
	}
	if f.Model != "" || f.FittedSustained != nil || f.IntervalFrom != nil || !strings.HasPrefix(f.Reason, "not enough history") {
		t.Errorf("14 points: model %q reason %q", f.Model, f.Reason)
	}
	// 20 points of 1 - 0.001 n: the trend has fallen 0.019 of the 0.2 to the
	// threshold (computed), under 10 %: no forecast either.
	var slow []TrendPoint
	for n := 1.0; n <= 20; n++ {
		slow = append(slow, TrendPoint{n, 1 - 0.001*n + 0.0005*math.Sin(n)})
	}
	f, _ = Forecast(slow, ForecastSettings{Threshold: 0.8})
	if f.FittedSustained != nil || f.IntervalFrom != nil || f.Progress >= DefaultMinProgress || !strings.HasPrefix(f.Reason, "not enough history") {
		t.Errorf("30 points, progress %.3f: model %q reason %q", f.Progress, f.Model, f.Reason)
	}
	t.Logf("reasons: %q", f.Reason)
	// A flat history never makes progress.
	var flat []TrendPoint
	for n := 1.0; n <= 50; n++ {
		flat = append(flat, TrendPoint{n, 1 + 0.001*math.Sin(n)})
	}
	if f, _ := Forecast(flat, ForecastSettings{Threshold: 0.8}); f.FittedSustained != nil || !strings.HasPrefix(f.Reason, "not enough history") {
		t.Errorf("flat history forecast %v (%s)", f.FittedSustained, f.Reason)
	}
}

func TestForecastDropsModelThatFails(t *testing.T) {
	broken := TrendModel{Name: "broken", Terms: []string{"a"}, minPoints: 2,
		predict: func(p []float64, n float64) float64 { return p[0] },
		fit: func(x, y, warm []float64) ([]float64, error) {
			return nil, errors.New("the optimiser did not converge")
		}}
	all := history(fadeFamilies[0], 2, 0.003)
	f, err := Forecast(upTo(all, 150), ForecastSettings{Threshold: 0.8, Models: []TrendModel{broken, LinearModel}})
	if err != nil {
		t.Fatal(err)
	}
	if f.Model != "linear" || f.Candidates[0].Dropped == "" || f.Candidates[0].BacktestMAE != nil || f.Candidates[0].Params != nil {
		t.Errorf("model %s, candidates %+v", f.Model, f.Candidates)
	}
	// With every candidate dropped there is no forecast, and a reason.
	f, _ = Forecast(upTo(all, 150), ForecastSettings{Threshold: 0.8, Models: []TrendModel{broken}})
	if f.Model != "" || f.Reason == "" || f.IntervalFrom != nil {
		t.Errorf("all dropped: model %q reason %q", f.Model, f.Reason)
	}
}

// Resistance rise: the same machinery forecasts an upward crossing. A pack
// whose resistance rises 0.5 %/cycle with noise crosses a 30 % rise limit
// at cycle 60 (computed from the law).
func TestForecastRisingResistance(t *testing.T) {
	var pts []TrendPoint
	for n := 1.0; n <= 40; n++ {
		noise := 0.8 * math.Sin(1.7*n) // deterministic scatter, ±0.8 %
		pts = append(pts, TrendPoint{n, 0.5*n + noise})
	}
	f, err := Forecast(pts, ForecastSettings{Threshold: 30, Rising: true})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("model %s forecast %s interval [%s, %s] %s", f.Model, fmtCycle(f.FittedSustained), fmtCycle(f.IntervalFrom), fmtCycle(f.IntervalTo), f.Reason)
	if f.FittedSustained == nil || math.Abs(*f.FittedSustained-60) > 3 || !contains(f, 60) {
		t.Errorf("forecast %s interval [%s, %s], want about 60 within", fmtCycle(f.FittedSustained), fmtCycle(f.IntervalFrom), fmtCycle(f.IntervalTo))
	}
	if f.IntervalFrom == nil || *f.IntervalFrom > *f.FittedSustained || (f.IntervalTo != nil && *f.IntervalTo < *f.FittedSustained) {
		t.Errorf("interval [%s, %s] does not hold the forecast %v", fmtCycle(f.IntervalFrom), fmtCycle(f.IntervalTo), *f.FittedSustained)
	}
}

// The band never narrows with the horizon, and it is open when too few
// origins reach any horizon: fewer points never buy a narrower interval.
func TestForecastBandWidens(t *testing.T) {
	all := history(fadeFamilies[2], 3, 0.003)
	f, err := Forecast(upTo(all, 150), ForecastSettings{Threshold: 0.8})
	if err != nil || f.Model == "" {
		t.Fatalf("%v %+v", err, f)
	}
	prev := 0.0
	for n := 150.0; n <= 400; n += 5 {
		lo, hi := f.Bounds(n)
		if w := hi - lo; w < prev-1e-12 {
			t.Fatalf("band narrows at cycle %v: %v after %v", n, w, prev)
		} else {
			prev = w
		}
	}
	// Eight points, with the minimum lowered to allow them: three origins,
	// fewer than the five an error spread needs, so nothing bounds the
	// forecast beyond the data and the interval is open at its far end.
	var short []TrendPoint
	for n := 1.0; n <= 8; n++ {
		short = append(short, TrendPoint{n, 1 - 0.02*n + 0.002*math.Sin(3*n)})
	}
	f, err = Forecast(short, ForecastSettings{Threshold: 0.8, MinPoints: 8, Models: []TrendModel{LinearModel}})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("8 points: origins %v, forecast %s interval [%s, %s]", f.Origins, fmtCycle(f.FittedSustained), fmtCycle(f.IntervalFrom), fmtCycle(f.IntervalTo))
	if f.FittedSustained == nil || f.IntervalTo != nil || f.IntervalFrom == nil || *f.IntervalFrom != 9 {
		t.Errorf("8 points: forecast %s interval [%s, %s], want an interval open from cycle 9",
			fmtCycle(f.FittedSustained), fmtCycle(f.IntervalFrom), fmtCycle(f.IntervalTo))
	}
}

// bench300 is 300 cycles of the B0005 curve repeated with a small extra fade
// per pass: a long history of real shape.
func bench300(b testing.TB) []TrendPoint {
	all := readB0005(b)
	pts := make([]TrendPoint, 300)
	for i := range pts {
		pts[i] = TrendPoint{Cycle: float64(i + 1), Value: all[i%len(all)].Value - 0.3*float64(i/len(all))}
	}
	return pts
}

// BenchmarkForecast300 is one pack's forecast on 300 points (it runs on
// every ingest; target under 5 ms); BenchmarkForecastFloorOLS300 is the
// floor in the same run, a plain least-squares line through the same points.
// Run: go test -run '^$' -bench 'Forecast' -benchtime 200x ./wear
func BenchmarkForecast300(b *testing.B) {
	pts := bench300(b)
	for b.Loop() {
		if f, err := Forecast(pts, ForecastSettings{Threshold: 1.4}); err != nil || f.Model == "" {
			b.Fatal(err, f.Reason)
		}
	}
}

func BenchmarkForecastFloorOLS300(b *testing.B) {
	pts := bench300(b)
	for b.Loop() {
		x, y := make([]float64, len(pts)), make([]float64, len(pts))
		for i, p := range pts {
			x[i], y[i] = p.Cycle, p.Value
		}
		if _, err := FitOLS(LinearBasis, x, y); err != nil {
			b.Fatal(err)
		}
	}
}
