package wear

import (
	"encoding/csv"
	"os"
	"strconv"
	"testing"
	"time"
)

// readB0005 reads cycle ("discharge") and capacity (Ah) from the NASA PCoE
// B0005 capacity table in testdata.
func readB0005(t *testing.T) []FadePoint {
	t.Helper()
	f, err := os.Open("testdata/nasa_pcoe_B0005_capacity.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if rows[0][0] != "discharge" || rows[0][4] != "capacity" {
		t.Fatalf("unexpected header %v", rows[0])
	}
	var pts []FadePoint
	for _, r := range rows[1:] {
		c, err1 := strconv.ParseFloat(r[0], 64)
		q, err2 := strconv.ParseFloat(r[4], 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("bad row %v", r)
		}
		pts = append(pts, FadePoint{Cycle: c, Capacity: q})
	}
	if len(pts) != 168 {
		t.Fatalf("read %d cycles, want 168", len(pts))
	}
	return pts
}

func TestB0005Forecast(t *testing.T) {
	// NASA Ames PCoE battery data set, cell B0005 (Saha and Goebel 2007;
	// rated 2 Ah, end of life 1.4 Ah = 70 % of rated, the experiments'
	// criterion). The measured capacity first falls below 1.4 Ah at cycle 125
	// and stays below (REFERENCES.md section 4).
	all := readB0005(t)
	first, sustained := ObservedCrossing(all, 0.70*2.0)
	if first == nil || *first != 125 || sustained == nil || *sustained != 125 {
		t.Fatalf("observed crossings = %v, %v; want 125, 125", first, sustained)
	}

	// Fit on cycles 1-100 only and forecast the sustained crossing.
	var train []FadePoint
	for _, p := range all {
		if p.Cycle <= 100 {
			train = append(train, p)
		}
	}
	fit, err := FitFade(train)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range fit.Candidates {
		t.Logf("candidate %-6s coef %v residual SD %.5f R^2 %.4f AICc %.2f", c.Model, c.Coef, c.ResidualSD, c.RSquared, c.AICc)
	}
	// Between linear and square-root-of-cycles, AICc chooses linear on these
	// data (its fade accelerates; sqrt assumes it slows).
	if fit.Model != "linear" || fit.Criterion != "AICc" {
		t.Errorf("chose %s by %s, want linear by AICc", fit.Model, fit.Criterion)
	}
	fc, err := fit.ForecastFraction(2.0, 0.70, 0.95, 0)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "threshold Ah", fc.Threshold, 1.4, 1e-12)
	if fc.FittedSustained == nil || fc.IntervalFrom == nil || fc.IntervalTo == nil {
		t.Fatalf("no forecast: %+v", fc)
	}
	t.Logf("fitted first %v sustained %v, 95 %% interval [%v, %v]", *fc.FittedFirst, *fc.FittedSustained, *fc.IntervalFrom, *fc.IntervalTo)
	if d := *fc.FittedSustained - 125; d < -15 || d > 15 {
		t.Errorf("sustained crossing forecast %v is not within 15 cycles of 125", *fc.FittedSustained)
	}
	if *fc.IntervalFrom > 125 || *fc.IntervalTo < 125 {
		t.Errorf("interval [%v, %v] does not cover cycle 125", *fc.IntervalFrom, *fc.IntervalTo)
	}
	// For the record (not a default candidate): a quadratic wins on AICc
	// in-sample but extrapolates the acceleration too far.
	if q, err := FitFade(train, LinearBasis, SqrtBasis, QuadraticBasis); err == nil {
		if qf, err := q.Forecast(1.4, 0.95, 0); err == nil && qf.FittedSustained != nil && qf.IntervalTo != nil {
			t.Logf("with quadratic offered: chose %s, sustained %v, interval [%v, %v]", q.Model, *qf.FittedSustained, *qf.IntervalFrom, *qf.IntervalTo)
		}
	}
	// Training data are all above 1.4 Ah: nothing observed crosses.
	if fc.ObservedFirst != nil || fc.ObservedSustained != nil {
		t.Errorf("observed crossings in cycles 1-100: %v %v", fc.ObservedFirst, fc.ObservedSustained)
	}
}

func TestFirstVersusSustainedCrossing(t *testing.T) {
	// Hand example with a capacity "regeneration" after a rest: below the
	// line at cycle 3, back above at 4, below for good from 5.
	pts := []FadePoint{{1, 1.0}, {2, 0.85}, {3, 0.75}, {4, 0.82}, {5, 0.7}, {6, 0.65}}
	first, sustained := ObservedCrossing(pts, 0.8)
	if first == nil || *first != 3 || sustained == nil || *sustained != 5 {
		t.Errorf("got %v, %v; want 3, 5", first, sustained)
	}
	// Latest point back above: no sustained crossing.
	if _, s := ObservedCrossing(append(pts, FadePoint{7, 0.9}), 0.8); s != nil {
		t.Errorf("sustained = %v, want none", *s)
	}

	// A fitted curve that dips and recovers: y = 0.5 + 1e-4 (x - 50)^2 is
	// below 0.6 where (x - 50)^2 < 1000, i.e. from cycle 19 to 81 (hand
	// computed), so its first crossing is 19 and it has no sustained one.
	var curve []FadePoint
	for x := 0.0; x <= 100; x++ {
		curve = append(curve, FadePoint{x, 0.5 + 1e-4*(x-50)*(x-50)})
	}
	fit, err := FitFade(curve, QuadraticBasis)
	if err != nil {
		t.Fatal(err)
	}
	fc, err := fit.Forecast(0.6, 0.95, 200)
	if err != nil {
		t.Fatal(err)
	}
	if fc.FittedFirst == nil || *fc.FittedFirst != 19 || fc.FittedSustained != nil {
		t.Errorf("fitted first %v sustained %v; want 19, none", fc.FittedFirst, fc.FittedSustained)
	}
}

func TestForecastRefuses(t *testing.T) {
	fit, err := FitFade([]FadePoint{{1, 1}, {2, 0.99}, {3, 0.985}, {4, 0.97}, {5, 0.96}})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := fit.Forecast(0.8, 1.5, 0); err == nil {
		t.Error("level 1.5 accepted")
	}
	if _, err := fit.Forecast(0.8, 0.95, 3); err == nil {
		t.Error("horizon before the last cycle accepted")
	}
	if _, err := fit.ForecastFraction(0, 0.8, 0.95, 0); err == nil {
		t.Error("zero rated capacity accepted")
	}
	if _, err := (FadeFit{}).Forecast(0.8, 0.95, 0); err == nil {
		t.Error("empty fit accepted")
	}
}

func TestCycleDate(t *testing.T) {
	now := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	// 40 cycles to go at 0.5 cycles/day -> 80 days (computed).
	if d := CycleDate(now, 100, 140, 0.5); d == nil || !d.Equal(now.AddDate(0, 0, 80)) {
		t.Errorf("date = %v", d)
	}
	if d := CycleDate(now, 100, 140, 0); d != nil {
		t.Errorf("no usage: date = %v, want nil", d)
	}
	if d := CycleDate(now, 150, 140, 1); d == nil || !d.Equal(now) {
		t.Errorf("already past: date = %v, want now", d)
	}
}
