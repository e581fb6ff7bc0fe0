package wear

import (
	"math"
	"slices"
	"sync"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/selection"
)

// TheilSen returns the Theil-Sen robust line through (x, y): the slope is
// the median of the pairwise slopes (y_j - y_i)/(x_j - x_i) over pairs with
// distinct x (Sen 1968), and the intercept the median of y_i - slope x_i.
// Up to about 29 % of the points may be wild without moving it far.
func TheilSen(x, y []float64) (slope, intercept float64, err error) {
	if len(x) != len(y) {
		return 0, 0, fleet.Errorf(fleet.EINVALID, "x and y differ in length (%d, %d)", len(x), len(y))
	}
	need := len(x) * (len(x) - 1) / 2
	var slopes []float64
	if need <= maxKeptSlopes && slopeBuf.TryLock() {
		defer slopeBuf.Unlock()
		if cap(slopeBuf.b) < need {
			slopeBuf.b = make([]float64, 0, need)
		}
		slopes = slopeBuf.b[:0]
	} else {
		slopes = make([]float64, 0, need)
	}
	for i := range x {
		if !finite(x[i]) || !finite(y[i]) {
			return 0, 0, fleet.Errorf(fleet.EINVALID, "point %d is not finite", i)
		}
		for j := i + 1; j < len(x); j++ {
			if x[j] != x[i] {
				slopes = append(slopes, (y[j]-y[i])/(x[j]-x[i]))
			}
		}
	}
	if len(slopes) == 0 {
		return 0, 0, fleet.Errorf(fleet.EUNPROCESSABLE, "a trend needs at least two distinct x values")
	}
	slope = median(slopes)
	res := make([]float64, len(x))
	for i := range x {
		res[i] = y[i] - slope*x[i]
	}
	return slope, median(res), nil
}

// slopeBuf keeps one pairwise-slope buffer between TheilSen calls: a
// pack's 500 flights make 125,000 slopes, a megabyte that every refresh
// would otherwise allocate (a sync.Pool lost it at nearly every
// collection). A call that finds it in use allocates its own.
var slopeBuf struct {
	sync.Mutex
	b []float64
}

// maxKeptSlopes bounds the kept buffer (8 MB, about 1,400 points): a rare
// longer series allocates its own rather than pin a larger one.
const maxKeptSlopes = 1 << 20

// median returns the median of v (the mean of the middle pair for even
// length); it reorders v. It selects rather than sorts: Theil-Sen takes the
// median of n(n-1)/2 slopes, which for a pack's 500 flights is 125,000
// values, and a full sort of them cost more than the rest of its health
// view. The values are the sorted order's middle ones exactly.
func median(v []float64) float64 {
	n := len(v)
	hi := selection.Nth(v, n/2)
	if n%2 == 1 {
		return hi
	}
	return (slices.Max(v[:n/2]) + hi) / 2 // v[:n/2] holds the n/2 smallest
}

// TrendResult is a robust trend over the last flights of an airframe.
type TrendResult struct {
	N              int     // flights in the window
	Slope          float64 // per flight
	Intercept      float64 // at the window's first flight
	BaselineMedian float64 // median of the window's first half (ceil(N/2) flights)
	// RisePct is the relative rise over the window,
	// 100 * Slope * (N - 1) / BaselineMedian.
	RisePct float64
	Flag    bool // RisePct > the limit
}

// Trend fits a Theil-Sen line to the last lastN values (oldest first; 0
// means all), x being the flight's place in the window (0, 1, ...), and
// flags a rise over the window beyond limitPct. Used for the hover
// efficiency index and vibration RMS, both positive quantities.
func Trend(values []float64, lastN int, limitPct float64) (TrendResult, error) {
	if lastN < 0 {
		return TrendResult{}, fleet.FieldError("last_n", "window must be non-negative")
	}
	if lastN > 0 && len(values) > lastN {
		values = values[len(values)-lastN:]
	}
	n := len(values)
	if n < 3 {
		return TrendResult{}, fleet.Errorf(fleet.EUNPROCESSABLE, "a trend needs at least 3 flights, got %d", n)
	}
	x := make([]float64, n)
	for i := range x {
		x[i] = float64(i)
	}
	slope, icpt, err := TheilSen(x, values)
	if err != nil {
		return TrendResult{}, err
	}
	base := median(append([]float64(nil), values[:(n+1)/2]...))
	if !(base > 0) {
		return TrendResult{}, fleet.Errorf(fleet.EUNPROCESSABLE, "baseline median %g is not positive", base)
	}
	r := TrendResult{N: n, Slope: slope, Intercept: icpt, BaselineMedian: base}
	r.RisePct = 100 * slope * float64(n-1) / base
	r.Flag = r.RisePct > limitPct && !math.IsNaN(r.RisePct)
	return r, nil
}
