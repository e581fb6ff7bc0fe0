package wear

import (
	"math"
	"sort"
	"sync"

	"gonum.org/v1/gonum/stat/distuv"
)

// candidateFit is one converged candidate with its backtest and, once
// prepared, its error band.
type candidateFit struct {
	model      TrendModel
	params     []float64
	mae        float64
	errs       [][]float64
	residualSD float64
	band       errorBand
	last       float64 // fitted value at the last measured cycle
}

func (c *candidateFit) predict(n float64) float64 { return c.model.predict(c.params, n) }

// prepare builds the candidate's error band from its backtest errors and its
// residual noise.
func (c *candidateFit) prepare(x, y []float64, ks []int, level float64) {
	var sse float64
	for i := range x {
		e := y[i] - c.predict(x[i])
		sse += e * e
	}
	dof := max(1, len(x)-len(c.params))
	c.residualSD = math.Sqrt(sse / float64(dof))
	c.band = newErrorBand(x, ks, c.errs, c.residualSD*studentT(float64(dof), level), level)
	lastCycle := x[len(x)-1]
	c.last = c.predict(lastCycle)
	c.band.change0 = math.Abs(c.predict(lastCycle+c.band.h[len(c.band.h)-1]) - c.last)
}

// bounds is the prediction interval for one new measurement at cycle n.
func (c *candidateFit) bounds(n, lastCycle float64) (lo, hi float64) {
	v := c.predict(n)
	l, h := c.band.at(n-lastCycle, math.Abs(v-c.last))
	return v + l, v + h
}

// crossings walks whole cycles from the first observed cycle to the horizon
// for the crossings of the fitted curve and of the band's bounds: the first
// and sustained crossings of the curve, the first of the pessimistic bound
// and the sustained one of the optimistic bound.
func (c *candidateFit) crossings(threshold float64, rising bool, firstCycle, lastCycle, horizon float64) (first, sustained, from, to *float64) {
	beyond := func(v float64) bool {
		if rising {
			return v > threshold
		}
		return v < threshold
	}
	worse := func(n float64) bool {
		lo, hi := c.bounds(n, lastCycle)
		if rising {
			return beyond(hi)
		}
		return beyond(lo)
	}
	better := func(n float64) bool {
		lo, hi := c.bounds(n, lastCycle)
		if rising {
			return beyond(lo)
		}
		return beyond(hi)
	}
	curve := func(n float64) bool { return beyond(c.predict(n)) }
	// First crossings walk forward from the first cycle, sustained ones
	// backward from the horizon, each on a grid of at most searchSteps
	// steps refined to whole cycles: exact unless the curve dips across and
	// back within one step (the candidate laws turn at most once).
	start, end := math.Ceil(firstCycle), math.Floor(horizon)
	step := math.Max(1, math.Ceil((end-start)/searchSteps))
	return firstTrue(curve, start, end, step), sustainedFrom(curve, start, end, step),
		firstTrue(worse, start, end, step), sustainedFrom(better, start, end, step)
}

// searchSteps bounds the coarse steps of a crossing search.
const searchSteps = 500

// firstTrue returns the first whole n in [start, end] where ok(n), walking
// in steps of step and refining to whole cycles; nil when none.
func firstTrue(ok func(float64) bool, start, end, step float64) *float64 {
	prev := start - 1
	for n := start; n <= end; n += step {
		if ok(n) {
			for m := prev + 1; m < n; m++ {
				if ok(m) {
					return ptr(m)
				}
			}
			return ptr(n)
		}
		prev = n
	}
	if prev < end {
		for m := prev + 1; m <= end; m++ {
			if ok(m) {
				return ptr(m)
			}
		}
	}
	return nil
}

// sustainedFrom returns the first whole n after which ok holds up to end:
// start when it holds throughout, nil when it does not hold at end.
func sustainedFrom(ok func(float64) bool, start, end, step float64) *float64 {
	if !ok(end) {
		return nil
	}
	next := end
	for n := end - step; n >= start; n -= step {
		if !ok(n) {
			for m := next - 1; m > n; m-- {
				if !ok(m) {
					return ptr(m + 1)
				}
			}
			return ptr(n + 1)
		}
		next = n
	}
	for m := next - 1; m >= start; m-- {
		if !ok(m) {
			return ptr(m + 1)
		}
	}
	return ptr(start)
}

// crossings returns the first measured cycle beyond the threshold and the
// sustained crossing: the first measurement beyond after the last one that
// is not (nil when the latest is not beyond).
func crossings(pts []TrendPoint, threshold float64, rising bool) (first, sustained *float64) {
	last := -1
	for i, p := range pts {
		b := p.Value < threshold
		if rising {
			b = p.Value > threshold
		}
		if b && first == nil {
			first = ptr(p.Cycle)
		}
		if !b {
			last = i
		}
	}
	if last+1 < len(pts) {
		sustained = ptr(pts[last+1].Cycle)
	}
	return first, sustained
}

// errorBand is the prediction interval of the error (measured minus
// forecast) against horizon in cycles: lo <= 0 <= hi at each grid horizon.
type errorBand struct {
	h, lo, hi []float64
	// change0 is the forecast's change from the last measurement to the
	// last grid horizon: beyond the grid the band grows in proportion to the
	// change.
	change0 float64
}

// newErrorBand builds the band from each origin's forecast errors. At each
// of horizonGrid horizons up to the longest that minOriginsPerHorizon
// origins reach, the errors of the K origins reaching it (interpolated
// between the points around it) give mean ± t(K-1) sd sqrt(1 + 1/K): a
// prediction interval for one more error, wide when K is small. The band is
// never narrower than the errors seen at that horizon, nor than the fit's
// noise (± noise at horizon 0), and never narrows as the horizon grows.
func newErrorBand(x []float64, ks []int, errs [][]float64, noise, level float64) errorBand {
	b := errorBand{h: []float64{0}, lo: []float64{-noise}, hi: []float64{noise}}
	if len(ks) < minOriginsPerHorizon {
		return b
	}
	last := x[len(x)-1]
	hmax := last - x[ks[minOriginsPerHorizon-1]-1]
	if !(hmax > 0) {
		return b
	}
	vals := make([]float64, 0, len(ks))
	for g := 1; g <= horizonGrid; g++ {
		h := hmax * float64(g) / horizonGrid
		vals = vals[:0]
		for i, k := range ks {
			origin := x[k-1]
			if last-origin < h*(1-1e-12) {
				continue
			}
			vals = append(vals, errorAt(x[k:], errs[i], origin+h))
		}
		if len(vals) < minOriginsPerHorizon {
			break
		}
		var mean, ss float64
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, v := range vals {
			mean += v
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
		k := float64(len(vals))
		mean /= k
		for _, v := range vals {
			ss += (v - mean) * (v - mean)
		}
		t := studentT(k-1, level)
		half := t * math.Sqrt(ss/(k-1)) * math.Sqrt(1+1/k)
		prevLo, prevHi := b.lo[len(b.lo)-1], b.hi[len(b.hi)-1]
		b.h = append(b.h, h)
		b.lo = append(b.lo, math.Min(math.Min(mean-half, lo), prevLo))
		b.hi = append(b.hi, math.Max(math.Max(mean+half, hi), prevHi))
	}
	return b
}

// studentT is the two-sided Student-t quantile at level for nu degrees of
// freedom, remembered (the band asks for the same few many times).
func studentT(nu, level float64) float64 {
	key := [2]float64{nu, level}
	tCache.Lock()
	defer tCache.Unlock()
	if v, ok := tCache.m[key]; ok {
		return v
	}
	v := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: nu}.Quantile(0.5 + level/2)
	if len(tCache.m) < 1024 {
		tCache.m[key] = v
	}
	return v
}

var tCache = struct {
	sync.Mutex
	m map[[2]float64]float64
}{m: map[[2]float64]float64{}}

// errorAt interpolates an origin's errors (at cycles xs) at cycle c.
func errorAt(xs, e []float64, c float64) float64 {
	i := sort.SearchFloat64s(xs, c)
	switch {
	case i == 0:
		return e[0]
	case i >= len(xs):
		return e[len(e)-1]
	}
	f := (c - xs[i-1]) / (xs[i] - xs[i-1])
	return e[i-1] + f*(e[i]-e[i-1])
}

// at returns the band at horizon h, cycles after the last measurement
// (within the data, the noise band), where the forecast has changed by
// change since the last measurement. Beyond the last grid horizon h_max the
// band's excess over the noise grows in proportion to the forecast's change
// from the last measurement (in proportion to h when the forecast is flat):
// an error in the fade rate grows with the fade. With no grid at all,
// nothing bounds the forecast beyond the data.
func (b errorBand) at(h, change float64) (lo, hi float64) {
	if h <= 0 {
		return b.lo[0], b.hi[0]
	}
	n := len(b.h)
	if n == 1 {
		return math.Inf(-1), math.Inf(1)
	}
	if h >= b.h[n-1] {
		s := h / b.h[n-1]
		if b.change0 > 1e-12 {
			s = math.Max(1, change/b.change0)
		}
		return b.lo[0] + (b.lo[n-1]-b.lo[0])*s, b.hi[0] + (b.hi[n-1]-b.hi[0])*s
	}
	i := sort.SearchFloat64s(b.h, h)
	f := (h - b.h[i-1]) / (b.h[i] - b.h[i-1])
	return b.lo[i-1] + f*(b.lo[i]-b.lo[i-1]), b.hi[i-1] + f*(b.hi[i]-b.hi[i-1])
}
