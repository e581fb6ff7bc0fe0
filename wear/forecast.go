package wear

import (
	"fmt"
	"math"
	"sort"

	"github.com/rotorwright/rotorwright/fleet"
)

// Defaults of ForecastSettings.
const (
	// DefaultMinForecastPoints is the fewest measurements a forecast rests on.
	DefaultMinForecastPoints = 15
	// DefaultMinProgress is the least share of the way from the first level
	// to the threshold the data must already cover (by a straight-line fit):
	// before that, the shape of the fade is not yet in the data.
	DefaultMinProgress = 0.10
	// DefaultForecastLevel is the prediction-interval level.
	DefaultForecastLevel = 0.95
	// maxOrigins is the most rolling origins a forecast evaluates (the
	// forecast runs after every ingest, so its cost is bounded).
	maxOrigins = 8
	// minOriginsPerHorizon: an error spread is taken over at least five
	// origins (fewer make the t factor, and the spread, unstable).
	minOriginsPerHorizon = 5
	// horizonGrid is the number of horizons the error spread is taken at.
	horizonGrid = 8
)

// PlausibleRatio: a candidate whose backtest error is within this factor of
// the best one's is not clearly worse, so the interval covers its forecast
// too (our choice: with a handful of origins, errors closer than this are
// not told apart reliably).
const PlausibleRatio = 1.5

// ForecastMethod states how Forecast chooses its model and builds its
// interval; the health view and the command-line tool show it.
const ForecastMethod = "Model: each candidate is fitted on the first k points for up to 8 origins k (a third of " +
	"the points to all but a tenth) and scored by the mean absolute error of its forecasts of the next h points " +
	"(h a quarter of the points); the lowest score wins. Interval: for each plausible candidate (the winner and any " +
	"within 1.5 times its score), its rolling-origin errors at each horizon reached by at least 5 origins give " +
	"mean ± t(K-1) sd sqrt(1 + 1/K) over the K origins, never narrower than the errors seen, the fit's residual " +
	"noise or the band at a shorter horizon; beyond the longest such horizon the band's excess over the noise grows " +
	"in proportion to the forecast change. The crossing interval runs from the first cycle the pessimistic bound " +
	"crosses to the sustained crossing of the optimistic bound, over all plausible candidates."

// ForecastSettings configure Forecast. Zero values take the defaults.
type ForecastSettings struct {
	Threshold float64
	// Rising forecasts a crossing from below (resistance rise); else from
	// above (capacity).
	Rising      bool
	Level       float64 // prediction-interval level; 0 means 0.95
	Horizon     float64 // last cycle searched; 0 means max(10 x last cycle, 1000)
	MinPoints   int     // 0 means DefaultMinForecastPoints
	MinProgress float64 // 0 means DefaultMinProgress
	Models      []TrendModel
}

// Candidate is how one model fared.
type Candidate struct {
	Model  string    `json:"model"`
	Source string    `json:"source"`
	Terms  []string  `json:"terms"`
	Params []float64 `json:"params"` // fitted on all points; null when dropped
	// BacktestMAE is the mean over the origins of the mean absolute error of
	// the model's forecasts of the next h points.
	BacktestMAE *float64 `json:"backtest_mae"`
	Dropped     string   `json:"dropped,omitempty"` // why the model was dropped
}

// Crossing is where a trend meets one threshold. Cycles are whole cycles;
// nil means "not within the horizon" or "not observed". "First" crossing is
// the first cycle beyond the threshold; "sustained" the first cycle after
// which it stays beyond.
type Crossing struct {
	Threshold float64 `json:"threshold"`
	// Progress is the share of the way from the first level to the threshold
	// the data cover, by a straight-line fit (1 when they start beyond it).
	Progress float64 `json:"progress"`
	// Reason says why there is no forecast crossing (not enough history, or
	// the trend does not reach the threshold); empty otherwise.
	Reason            string   `json:"reason,omitempty"`
	ObservedFirst     *float64 `json:"observed_first_cycle"`
	ObservedSustained *float64 `json:"observed_sustained_cycle"`
	FittedFirst       *float64 `json:"fitted_first_cycle"`
	FittedSustained   *float64 `json:"fitted_sustained_cycle"`
	// The interval of the sustained crossing: from the first cycle at which
	// a pessimistic bound is beyond the threshold to the last sustained
	// crossing of an optimistic bound (nil when beyond the horizon).
	IntervalFrom *float64 `json:"interval_from_cycle"`
	IntervalTo   *float64 `json:"interval_to_cycle"`
}

// TrendForecast is a trend fitted with the model chosen by rolling-origin
// evaluation and an empirical prediction interval, and its crossing of the
// settings' threshold (CrossingAt gives others).
type TrendForecast struct {
	Crossing
	Rising     bool    `json:"rising"`
	Level      float64 `json:"level"`
	Horizon    float64 `json:"horizon_cycle"`
	Points     int     `json:"fit_points"`
	FirstCycle float64 `json:"first_cycle"`
	LastCycle  float64 `json:"last_cycle"`

	Model       string      `json:"model"` // the chosen model; "" when none was fitted
	Source      string      `json:"source"`
	Terms       []string    `json:"terms"`
	Params      []float64   `json:"params"`
	ResidualSD  float64     `json:"residual_sd"`
	BacktestMAE float64     `json:"backtest_mae"`
	Origins     []int       `json:"backtest_origins"` // training sizes k
	Candidates  []Candidate `json:"candidates"`
	// Plausible names the candidates whose intervals the interval covers:
	// the chosen one and those within PlausibleRatio of its backtest error.
	Plausible []string `json:"plausible_models"`
	Method    string   `json:"method"`

	settings ForecastSettings
	pts      []TrendPoint
	line     []float64      // straight-line fit, for progress
	fits     []candidateFit // the plausible candidates, the chosen one first
}

// Predict returns the chosen model's value at cycle n (NaN without a model).
func (f *TrendForecast) Predict(n float64) float64 {
	if len(f.fits) == 0 {
		return math.NaN()
	}
	return f.fits[0].predict(n)
}

// Bounds returns the chosen model's prediction interval for one new
// measurement at cycle n (NaN without a model).
func (f *TrendForecast) Bounds(n float64) (lo, hi float64) {
	if len(f.fits) == 0 {
		return math.NaN(), math.NaN()
	}
	return f.fits[0].bounds(n, f.LastCycle)
}

// Forecast fits the trend of points (cycle, value) and forecasts where it
// crosses s.Threshold (ForecastMethod says how). Too little history gives a
// forecast with a Reason and no crossing, not an error; bad input is an
// error.
func Forecast(points []TrendPoint, s ForecastSettings) (*TrendForecast, error) {
	if !finite(s.Threshold) {
		return nil, fleet.FieldError("threshold", "threshold must be finite")
	}
	if s.Level == 0 {
		s.Level = DefaultForecastLevel
	}
	if !(s.Level > 0 && s.Level < 1) {
		return nil, fleet.FieldError("level", "level must lie in (0, 1)")
	}
	if s.MinPoints == 0 {
		s.MinPoints = DefaultMinForecastPoints
	}
	if s.MinProgress == 0 {
		s.MinProgress = DefaultMinProgress
	}
	if len(s.Models) == 0 {
		s.Models = DefaultTrendModels()
	}
	pts := sortedPoints(points)
	x := make([]float64, len(pts))
	y := make([]float64, len(pts))
	for i, p := range pts {
		if p.Cycle < 0 || !finite(p.Cycle) || !finite(p.Value) {
			return nil, fleet.Errorf(fleet.EINVALID, "point %d: cycle and value must be finite, cycle non-negative", i)
		}
		x[i], y[i] = p.Cycle, p.Value
	}
	f := &TrendForecast{Rising: s.Rising, Level: s.Level, Points: len(pts), Method: ForecastMethod,
		Candidates: []Candidate{}, Origins: []int{}, Terms: []string{}, Params: []float64{}, Plausible: []string{},
		settings: s, pts: pts}
	if len(pts) > 0 {
		f.FirstCycle, f.LastCycle = x[0], x[len(x)-1]
	}
	f.Horizon = s.Horizon
	if f.Horizon == 0 {
		f.Horizon = math.Max(10*f.LastCycle, 1000)
	}
	if !(f.Horizon >= f.LastCycle) || f.Horizon-f.FirstCycle > 1e6 {
		return nil, fleet.FieldError("horizon", "horizon must lie between the last cycle and 10^6 cycles on")
	}
	if len(pts) >= s.MinPoints {
		if line, err := LinearModel.Fit(x, y); err == nil {
			f.line = line
			f.fit(x, y)
		}
	}
	f.Crossing = f.CrossingAt(s.Threshold)
	return f, nil
}

// fit backtests every candidate, chooses the one with the lowest backtest
// error, and keeps the plausible ones with their error bands.
func (f *TrendForecast) fit(x, y []float64) {
	s := f.settings
	f.Origins = origins(len(x), s.Models)
	fits := make([]candidateFit, 0, len(s.Models))
	best := -1
	for _, m := range s.Models {
		c := Candidate{Model: m.Name, Source: m.Source, Terms: m.Terms}
		params, mae, errs, why := backtest(m, x, y, f.Origins)
		if why != "" {
			c.Dropped = why
		} else {
			c.Params, c.BacktestMAE = params, ptr(mae)
			fits = append(fits, candidateFit{model: m, params: params, mae: mae, errs: errs})
			if best < 0 || mae < fits[best].mae {
				best = len(fits) - 1
			}
		}
		f.Candidates = append(f.Candidates, c)
	}
	if best < 0 {
		return
	}
	// The chosen model gives the forecast; every candidate whose backtest
	// error is within PlausibleRatio of the best is still a plausible law,
	// and the interval covers the intervals of them all (model uncertainty).
	fits[0], fits[best] = fits[best], fits[0]
	for i := range fits {
		c := fits[i]
		if i > 0 && c.mae > PlausibleRatio*fits[0].mae {
			continue
		}
		c.prepare(x, y, f.Origins, s.Level)
		f.fits = append(f.fits, c)
		f.Plausible = append(f.Plausible, c.model.Name)
	}
	c := f.fits[0]
	f.Model, f.Source, f.Terms, f.Params, f.BacktestMAE, f.ResidualSD = c.model.Name, c.model.Source, c.model.Terms, c.params, c.mae, c.residualSD
}

// CrossingAt returns where the fitted trend, and the interval over the
// plausible candidates, cross threshold (in the direction of the settings).
func (f *TrendForecast) CrossingAt(threshold float64) Crossing {
	s := f.settings
	c := Crossing{Threshold: threshold}
	c.ObservedFirst, c.ObservedSustained = crossings(f.pts, threshold, s.Rising)
	switch {
	case len(f.pts) < s.MinPoints:
		c.Reason = fmt.Sprintf("not enough history: %d points, a forecast needs at least %d", len(f.pts), s.MinPoints)
		return c
	case f.line == nil:
		c.Reason = "not enough history: too few distinct cycles"
		return c
	}
	c.Progress = progress(LinearModel.Predict(f.line, f.FirstCycle), LinearModel.Predict(f.line, f.LastCycle), threshold, s.Rising)
	switch {
	case c.Progress < s.MinProgress:
		c.Reason = fmt.Sprintf("not enough history: the trend has covered %.1f %% of the way to the threshold, a forecast needs %.0f %%",
			100*math.Max(0, c.Progress), 100*s.MinProgress)
		return c
	case len(f.fits) == 0:
		c.Reason = "no candidate model could be fitted"
		return c
	}
	openEnded := false
	for i, cf := range f.fits {
		first, sustained, from, to := cf.crossings(threshold, s.Rising, f.FirstCycle, f.LastCycle, f.Horizon)
		if i == 0 {
			c.FittedFirst, c.FittedSustained = first, sustained
		}
		if from != nil && (c.IntervalFrom == nil || *from < *c.IntervalFrom) {
			c.IntervalFrom = from
		}
		if to == nil {
			openEnded = true
		} else if c.IntervalTo == nil || *to > *c.IntervalTo {
			c.IntervalTo = to
		}
	}
	if openEnded {
		c.IntervalTo = nil
	}
	if c.FittedSustained == nil {
		c.Reason = fmt.Sprintf("the fitted trend does not stay beyond the threshold within %.0f cycles", f.Horizon)
	}
	return c
}

// sortedPoints returns a copy of points in cycle order.
func sortedPoints(points []TrendPoint) []TrendPoint {
	pts := append([]TrendPoint(nil), points...)
	sort.SliceStable(pts, func(i, j int) bool { return pts[i].Cycle < pts[j].Cycle })
	return pts
}

// progress is how far the straight-line trend has moved from its first
// level towards the threshold, as a share of the way (1 when it starts
// beyond).
func progress(a, b, threshold float64, rising bool) float64 {
	moved, way := a-b, a-threshold
	if rising {
		moved, way = b-a, threshold-a
	}
	if way <= 0 {
		return 1
	}
	return moved / way
}

// origins returns the training sizes k of the rolling origins: up to
// maxOrigins, evenly spread from a third of the points (and the most any
// model needs) to the point that leaves a tenth of them (at least two) to
// forecast.
func origins(n int, models []TrendModel) []int {
	lo := (n + 2) / 3
	for _, m := range models {
		lo = max(lo, m.minPoints)
	}
	hi := n - max(2, (n+9)/10)
	if hi < lo {
		return []int{}
	}
	count := min(maxOrigins, hi-lo+1)
	out := make([]int, 0, count)
	for i := 0; i < count; i++ {
		k := lo
		if count > 1 {
			k = lo + int(math.Round(float64(i)*float64(hi-lo)/float64(count-1)))
		}
		out = append(out, k)
	}
	return out
}

// backtest fits m at each origin k (warm-started from the previous one) and
// on all points. It returns the final parameters, the backtest error (the
// mean over origins of the mean absolute error of the forecasts of the next
// h points, h a quarter of the points, fewer for the last origins), each
// origin's errors of all the points after it (for the interval), or why the
// model is dropped.
func backtest(m TrendModel, x, y []float64, ks []int) (params []float64, mae float64, errs [][]float64, dropped string) {
	if len(ks) == 0 {
		return nil, 0, nil, "too few points for a rolling-origin evaluation"
	}
	h := scoredAhead(len(x))
	var warm []float64
	errs = make([][]float64, len(ks))
	for i, k := range ks {
		p, err := m.fit(x[:k], y[:k], warm)
		if err != nil {
			return nil, 0, nil, fmt.Sprintf("fit on the first %d points: %v", k, err)
		}
		warm = p
		e := make([]float64, len(x)-k)
		var sum, scored float64
		for j := k; j < len(x); j++ {
			e[j-k] = y[j] - m.predict(p, x[j])
			if j-k < h {
				scored += math.Abs(e[j-k])
			}
			sum += e[j-k]
		}
		if !finite(sum) {
			return nil, 0, nil, fmt.Sprintf("forecast from the first %d points is not finite", k)
		}
		errs[i] = e
		mae += scored / float64(min(h, len(e)))
	}
	p, err := m.fit(x, y, warm)
	if err != nil {
		return nil, 0, nil, fmt.Sprintf("fit on all points: %v", err)
	}
	return p, mae / float64(len(ks)), errs, ""
}

// scoredAhead is h, how many points after an origin its score covers: a
// quarter of the points, at least 3.
func scoredAhead(n int) int { return max(3, (n+3)/4) }
