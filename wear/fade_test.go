package wear

import (
	"encoding/csv"
	"github.com/rotorwright/rotorwright/fleet"
	"os"
	"strconv"
	"testing"
	"time"
)

// readB0005 reads cycle ("discharge") and capacity (Ah) from the NASA PCoE
// B0005 capacity table in testdata (B. Saha and K. Goebel (2007), "Battery
// Data Set", NASA Ames Prognostics Data Repository).
func readB0005(t testing.TB) []TrendPoint {
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
	var pts []TrendPoint
	for _, r := range rows[1:] {
		c, err1 := strconv.ParseFloat(r[0], 64)
		q, err2 := strconv.ParseFloat(r[4], 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("bad row %v", r)
		}
		pts = append(pts, TrendPoint{Cycle: c, Value: q})
	}
	if len(pts) != 168 {
		t.Fatalf("read %d cycles, want 168", len(pts))
	}
	return pts
}

func ftoa(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }

// The validation. NASA Ames PCoE battery data set, cell B0005 (Saha
// and Goebel 2007; rated 2 Ah, end of life 1.4 Ah = 70 % of rated, the
// experiments' criterion): the measured capacity first falls below 1.4 Ah at
// cycle 125 and stays below (REFERENCES.md section 4). Fitted on the cycles up
// to 60, 80 and 100, the forecast sustained crossing must be within 15
// cycles of 125 and its 95 % interval must contain 125. Every origin from 50
// to 160 is logged, with the coverage over them.
func TestB0005ForecastFromOrigins(t *testing.T) {
	all := readB0005(t)
	first, sustained := ObservedCrossing(all, 0.70*2.0)
	if first == nil || *first != 125 || sustained == nil || *sustained != 125 {
		t.Fatalf("observed crossings = %v, %v; want 125, 125", first, sustained)
	}
	const truth = 125.0
	covered, forecasts := 0, 0
	t.Logf("%6s  %-10s %8s  %-12s %9s  %s", "origin", "model", "forecast", "interval", "backtest", "plausible")
	for origin := 50.0; origin <= 160; origin += 10 {
		f, err := CapacityForecast(upTo(all, origin), 2.0, 0.70)
		if err != nil {
			t.Fatal(err)
		}
		if f.FittedSustained == nil {
			t.Logf("%6.0f  %-10s %s", origin, f.Model, f.Reason)
			continue
		}
		forecasts++
		if contains(f, truth) {
			covered++
		}
		t.Logf("%6.0f  %-10s %8s  [%4s, %4s] %9.4f  %v %s", origin, f.Model, fmtCycle(f.FittedSustained),
			fmtCycle(f.IntervalFrom), fmtCycle(f.IntervalTo), f.BacktestMAE, f.Plausible, f.Reason)
		if origin == 60 || origin == 80 || origin == 100 {
			if f.FittedSustained == nil || *f.FittedSustained < truth-15 || *f.FittedSustained > truth+15 {
				t.Errorf("origin %.0f: sustained crossing forecast %s, want within 15 cycles of 125", origin, fmtCycle(f.FittedSustained))
			}
			if !contains(f, truth) {
				t.Errorf("origin %.0f: interval [%s, %s] does not contain 125", origin, fmtCycle(f.IntervalFrom), fmtCycle(f.IntervalTo))
			}
			if f.ObservedFirst != nil && origin < truth {
				t.Errorf("origin %.0f: observed crossing %v before the truth", origin, *f.ObservedFirst)
			}
		}
	}
	t.Logf("interval coverage of cycle 125 over the origins with a forecast: %d/%d", covered, forecasts)
}

func TestObservedFirstVersusSustainedCrossing(t *testing.T) {
	// Hand example with a capacity "regeneration" after a rest: below the
	// line at cycle 3, back above at 4, below for good from 5.
	pts := []TrendPoint{{1, 1.0}, {2, 0.85}, {3, 0.75}, {4, 0.82}, {5, 0.7}, {6, 0.65}}
	first, sustained := ObservedCrossing(pts, 0.8)
	if first == nil || *first != 3 || sustained == nil || *sustained != 5 {
		t.Errorf("got %v, %v; want 3, 5", first, sustained)
	}
	// Latest point back above: no sustained crossing.
	if _, s := ObservedCrossing(append(pts, TrendPoint{7, 0.9}), 0.8); s != nil {
		t.Errorf("sustained = %v, want none", *s)
	}
	// Rising (resistance): above 10 at 2, back at 3, above from 4 on.
	r := []TrendPoint{{1, 5}, {2, 11}, {3, 9}, {4, 12}, {5, 13}}
	if first, sustained := crossings(r, 10, true); first == nil || *first != 2 || sustained == nil || *sustained != 4 {
		t.Errorf("rising: got %v, %v; want 2, 4", first, sustained)
	}
}

func TestFittedFirstVersusSustainedCrossing(t *testing.T) {
	// firstTrue and sustainedFrom on a curve that dips below and recovers:
	// y = 0.5 + 1e-4 (x - 50)^2 is below 0.6 where (x - 50)^2 < 1000, i.e.
	// from cycle 19 to 81 (hand computed), so its first crossing is 19 and it
	// has no sustained one within 200; below from 19 for good when the
	// horizon ends at 81.
	below := func(x float64) bool { return 0.5+1e-4*(x-50)*(x-50) < 0.6 }
	for _, step := range []float64{1, 7} {
		if f := firstTrue(below, 0, 200, step); f == nil || *f != 19 {
			t.Errorf("step %g: first crossing %v, want 19", step, f)
		}
		if s := sustainedFrom(below, 0, 200, step); s != nil {
			t.Errorf("step %g: sustained crossing %v, want none", step, *s)
		}
		if s := sustainedFrom(below, 0, 81, step); s == nil || *s != 19 {
			t.Errorf("step %g: sustained crossing to 81 = %v, want 19", step, s)
		}
	}
}

func TestForecastRefuses(t *testing.T) {
	pts := []TrendPoint{{1, 1}, {2, 0.99}, {3, 0.985}}
	for i, s := range []ForecastSettings{{Threshold: 0.8, Level: 1.5}, {Threshold: 0.8, Horizon: 2}} {
		if _, err := Forecast(pts, s); err == nil {
			t.Errorf("settings %d accepted", i)
		}
	}
	if _, err := CapacityForecast(pts, 0, 0.8); err == nil {
		t.Error("zero rated capacity accepted")
	}
	if _, err := CapacityForecast(pts, 1, 1.2); err == nil {
		t.Error("end of life 1.2 accepted")
	}
	if _, err := Forecast([]TrendPoint{{-1, 1}}, ForecastSettings{Threshold: 0.8}); err == nil {
		t.Error("negative cycle accepted")
	}
}

func TestCycleDate(t *testing.T) {
	now := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	// 40 cycles to go at 0.5 cycles/day -> 80 days (computed).
	if d, why := CycleDate(now, 100, 140, 0.5); d == nil || !d.Equal(now.AddDate(0, 0, 80)) || why != "" {
		t.Errorf("date = %v (%s)", d, why)
	}
	if d, why := CycleDate(now, 150, 140, 1); d == nil || !d.Equal(now) || why != "" {
		t.Errorf("already past: date = %v (%s), want now", d, why)
	}
	// Extreme rates saturate: 40 cycles at 1e-12 a day is 4e13 days, beyond
	// the 50-year horizon (no date, never a wrapped one); at 1e12 a day it is
	// 4e-11 days (3.456 microseconds) on; at 0 there is no date.
	for _, c := range []struct {
		rate float64
		date bool
		why  string
	}{{0, false, fleet.ForecastNoUse}, {1e-12, false, fleet.ForecastBeyondHorizon}, {1e12, true, ""}} {
		d, why := CycleDate(now, 100, 140, c.rate)
		if (d != nil) != c.date || why != c.why || (d != nil && d.Sub(now) != 3456*time.Nanosecond) {
			t.Errorf("rate %g: date %v (%q), want a date %v (%q)", c.rate, d, why, c.date, c.why)
		}
	}
}
