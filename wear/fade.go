package wear

import (
	"math"
	"sort"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// DefaultEOLFraction is the usual end-of-life threshold, 80 % of rated
// capacity (cell datasheets; IEEE 1188 uses 80 % for stationary batteries).
const DefaultEOLFraction = 0.80

// DefaultFadeModels returns the candidates FitFade compares when given
// none: linear and square-root-of-cycles fade. QuadraticBasis may be offered
// too, but polynomial curves extrapolate poorly beyond the data.
func DefaultFadeModels() []Basis { return []Basis{LinearBasis, SqrtBasis} }

// FadePoint is one capacity measurement at an equivalent-full-cycle count.
type FadePoint struct {
	Cycle    float64
	Capacity float64 // any unit, the same as the threshold's
}

// CandidateFit summarises one candidate model of a fade fit.
type CandidateFit struct {
	Model      string
	Coef       []float64
	ResidualSD float64
	RSquared   float64
	AICc       float64
}

// FadeFit is the chosen fade model and how the candidates compared.
type FadeFit struct {
	Fit
	// Criterion names the selection rule: lowest AICc (small-sample Akaike
	// information criterion; ties go to the earlier candidate).
	Criterion  string
	Candidates []CandidateFit
	points     []FadePoint // sorted by cycle
}

// FitFade fits each candidate (DefaultFadeModels when none) to the points
// and keeps the one with the lowest AICc. For candidates with equally many
// coefficients (linear and sqrt) that is the one with the smaller residual
// sum of squares; a model with more coefficients must earn them.
func FitFade(points []FadePoint, models ...Basis) (FadeFit, error) {
	if len(models) == 0 {
		models = DefaultFadeModels()
	}
	pts := append([]FadePoint(nil), points...)
	sort.SliceStable(pts, func(i, j int) bool { return pts[i].Cycle < pts[j].Cycle })
	x := make([]float64, len(pts))
	y := make([]float64, len(pts))
	for i, p := range pts {
		if p.Cycle < 0 || !finite(p.Cycle) {
			return FadeFit{}, fleet.Errorf(fleet.EINVALID, "cycle counts must be finite and non-negative")
		}
		x[i], y[i] = p.Cycle, p.Capacity
	}
	out := FadeFit{Criterion: "AICc", points: pts}
	best := -1
	for _, b := range models {
		f, err := FitOLS(b, x, y)
		if err != nil {
			return FadeFit{}, err
		}
		out.Candidates = append(out.Candidates, CandidateFit{Model: f.Model, Coef: f.Coef, ResidualSD: f.ResidualSD, RSquared: f.RSquared, AICc: f.AICc})
		if best < 0 || f.AICc < out.AICc {
			out.Fit, best = f, len(out.Candidates)-1
		}
	}
	return out, nil
}

// EOLForecast is where capacity meets the end-of-life threshold. Cycles are
// whole cycles. "First" crossing is the first cycle below the threshold;
// "sustained" crossing is the first cycle after which every later value
// stays below. Nil fields mean "not within the horizon" (or not observed).
type EOLForecast struct {
	Threshold float64
	Level     float64 // prediction-interval level, e.g. 0.95
	Horizon   float64 // last cycle searched
	// Observed crossings, from the measurements.
	ObservedFirst     *float64
	ObservedSustained *float64
	// Crossings of the fitted curve, searched from the first observed cycle.
	FittedFirst     *float64
	FittedSustained *float64
	// The cycles over which the prediction interval brackets the threshold:
	// from the first cycle whose lower bound is below it (IntervalFrom) to
	// the last whose upper bound is at or above it (IntervalTo). IntervalTo
	// is nil when the upper bound is still above the threshold at Horizon.
	IntervalFrom *float64
	IntervalTo   *float64
}

// Forecast searches whole cycles from the first observed cycle to horizon
// (0 means ten times the last observed cycle, at least 1000) for the
// crossings of threshold, with a prediction interval at level (0 means 0.95).
func (f FadeFit) Forecast(threshold, level, horizon float64) (EOLForecast, error) {
	if len(f.points) == 0 {
		return EOLForecast{}, fleet.Errorf(fleet.EINVALID, "no fade fit")
	}
	if !finite(threshold) {
		return EOLForecast{}, fleet.FieldError("threshold", "threshold must be finite")
	}
	if level == 0 {
		level = 0.95
	}
	if !(level > 0 && level < 1) {
		return EOLForecast{}, fleet.FieldError("level", "level must lie in (0, 1)")
	}
	first, last := f.points[0].Cycle, f.points[len(f.points)-1].Cycle
	if horizon == 0 {
		horizon = math.Max(10*last, 1000)
	}
	if !(horizon >= last) || horizon-first > 1e6 {
		return EOLForecast{}, fleet.FieldError("horizon", "horizon must lie between the last observed cycle and 10^6 cycles on")
	}
	out := EOLForecast{Threshold: threshold, Level: level, Horizon: horizon}
	out.ObservedFirst, out.ObservedSustained = ObservedCrossing(f.points, threshold)
	var lastAbove, lastUpper float64 = math.NaN(), math.NaN()
	t := f.tQuantile(level)
	for n := math.Ceil(first); n <= horizon; n++ {
		y := f.Predict(n)
		lo, hi := f.interval(n, t)
		if y < threshold && out.FittedFirst == nil {
			out.FittedFirst = ptr(n)
		}
		if y >= threshold {
			lastAbove = n
		}
		if lo < threshold && out.IntervalFrom == nil {
			out.IntervalFrom = ptr(n)
		}
		if hi >= threshold {
			lastUpper = n
		}
	}
	switch {
	case math.IsNaN(lastAbove):
		out.FittedSustained = ptr(math.Ceil(first))
	case lastAbove+1 <= horizon:
		out.FittedSustained = ptr(lastAbove + 1)
	}
	if !math.IsNaN(lastUpper) && lastUpper+1 <= horizon {
		out.IntervalTo = ptr(lastUpper)
	}
	return out, nil
}

// ForecastFraction is Forecast with the threshold given as a fraction of
// rated capacity (0 means DefaultEOLFraction), in the unit of the points.
func (f FadeFit) ForecastFraction(rated, fraction, level, horizon float64) (EOLForecast, error) {
	if !(rated > 0) || !finite(rated) {
		return EOLForecast{}, fleet.FieldError("rated", "rated capacity must be positive")
	}
	if fraction == 0 {
		fraction = DefaultEOLFraction
	}
	if !(fraction > 0 && fraction < 1) {
		return EOLForecast{}, fleet.FieldError("fraction", "end-of-life fraction must lie in (0, 1)")
	}
	return f.Forecast(fraction*rated, level, horizon)
}

// ObservedCrossing returns the first measured cycle below threshold and the
// sustained crossing: the first measurement below after the last one at or
// above it (nil when the latest measurement is still at or above).
func ObservedCrossing(points []FadePoint, threshold float64) (first, sustained *float64) {
	pts := append([]FadePoint(nil), points...)
	sort.SliceStable(pts, func(i, j int) bool { return pts[i].Cycle < pts[j].Cycle })
	lastAbove := -1
	for i, p := range pts {
		if p.Capacity < threshold && first == nil {
			first = ptr(p.Cycle)
		}
		if p.Capacity >= threshold {
			lastAbove = i
		}
	}
	if lastAbove+1 < len(pts) {
		sustained = ptr(pts[lastAbove+1].Cycle)
	}
	return first, sustained
}

// CycleDate converts a forecast cycle to a date at a usage rate of
// cyclesPerDay (e.g. equivalent full cycles per day over a trailing window):
// nil when there is no usage; now when the cycle is already reached.
func CycleDate(now time.Time, currentCycles, targetCycle, cyclesPerDay float64) *time.Time {
	if !(cyclesPerDay > 0) || !finite(cyclesPerDay) {
		return nil
	}
	return addDays(now, (targetCycle-currentCycles)/cyclesPerDay)
}

func ptr(v float64) *float64 { return &v }
