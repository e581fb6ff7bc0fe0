package health

import (
	"math"

	"github.com/rotorwright/rotorwright/wear"
)

// CurvePoint is a forecast's fitted value at a cycle count with its
// prediction interval for one new measurement there: what a chart draws as
// the curve and its band.
type CurvePoint struct {
	Cycle float64 `json:"cycle"`
	Value float64 `json:"value"`
	Lo    float64 `json:"lo"`
	Hi    float64 `json:"hi"`
}

// curveSamples is how many cycles a curve is sampled at: smooth enough for
// the fade laws at chart size.
const curveSamples = 64

// forecastCurve samples the chosen model and its interval from the first
// measured cycle to a little past the later of the last measurement and the
// sustained crossing, so a chart shows where the curve meets the threshold.
// Empty when no model was fitted.
func forecastCurve(fc *wear.TrendForecast) []CurvePoint {
	if fc == nil || fc.Model == "" {
		return []CurvePoint{}
	}
	from, to := fc.FirstCycle, fc.LastCycle
	if c := fc.FittedSustained; c != nil {
		to = math.Max(to, *c)
	}
	to = math.Min(fc.Horizon, from+(to-from)*1.08)
	out := make([]CurvePoint, 0, curveSamples+1)
	for i := 0; i <= curveSamples; i++ {
		x := from + (to-from)*float64(i)/curveSamples
		lo, hi := fc.Bounds(x)
		y := fc.Predict(x)
		if math.IsNaN(y) || math.IsNaN(lo) || math.IsNaN(hi) {
			continue
		}
		out = append(out, CurvePoint{Cycle: x, Value: y, Lo: lo, Hi: hi})
	}
	return out
}
