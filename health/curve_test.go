package health

import (
	"math"
	"testing"

	"github.com/rotorwright/rotorwright/wear"
)

// The chart curve follows the chosen model and its interval from the first
// measurement to past the sustained crossing.
func TestForecastCurve(t *testing.T) {
	var pts []wear.TrendPoint
	for i := 0; i < 30; i++ {
		x := float64(5 * i)
		pts = append(pts, wear.TrendPoint{Cycle: x, Value: 10000 - 10*x + float64(i%4*8)})
	}
	fc, err := wear.Forecast(pts, wear.ForecastSettings{Threshold: 8000})
	if err != nil || fc.Model == "" || fc.FittedSustained == nil {
		t.Fatalf("forecast %+v: %v", fc, err)
	}
	c := forecastCurve(fc)
	if len(c) != curveSamples+1 {
		t.Fatalf("%d samples", len(c))
	}
	if c[0].Cycle != fc.FirstCycle || c[len(c)-1].Cycle < *fc.FittedSustained {
		t.Errorf("curve spans %g to %g; data from %g, crossing at %g", c[0].Cycle, c[len(c)-1].Cycle, fc.FirstCycle, *fc.FittedSustained)
	}
	for _, p := range c {
		lo, hi := fc.Bounds(p.Cycle)
		if p.Value != fc.Predict(p.Cycle) || p.Lo != lo || p.Hi != hi || !(p.Lo <= p.Value && p.Value <= p.Hi) {
			t.Fatalf("sample %+v: model %g, bounds %g..%g", p, fc.Predict(p.Cycle), lo, hi)
		}
	}
	if len(forecastCurve(&wear.TrendForecast{})) != 0 || math.IsNaN(c[0].Value) {
		t.Error("a forecast without a model has a curve")
	}
}
