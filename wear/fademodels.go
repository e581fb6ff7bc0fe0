package wear

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/optimize"
)

// TrendModel is one candidate law for how a pack figure (capacity, or
// resistance rise) moves with equivalent full cycles n. Every candidate is
// from the battery-ageing literature; Source names it. Params are in the
// units of the data and of cycles, in the order of Terms.
type TrendModel struct {
	Name   string
	Source string
	Terms  []string
	// minPoints is the fewest points the fit accepts.
	minPoints int
	predict   func(p []float64, n float64) float64
	// fit returns the least-squares parameters; warm, when not nil, is a
	// previous solution to start from. An error means the model is dropped.
	fit func(x, y, warm []float64) ([]float64, error)
}

// Predict evaluates the model with parameters p at cycle n.
func (m TrendModel) Predict(p []float64, n float64) float64 { return m.predict(p, n) }

// Fit fits the model to (x, y) by least squares.
func (m TrendModel) Fit(x, y []float64) ([]float64, error) { return m.fit(x, y, nil) }

// Bounds of the power-law exponent: below 0.3 the curve is a step at cycle
// 0, above 1.5 it accelerates faster than published capacity-fade fits of
// that form (our bounds, from the range those fits report: from memory).
const (
	PowerZMin = 0.3
	PowerZMax = 1.5
)

// dexpRateMax bounds the double-exponential rates b and d, in units of the
// reciprocal of the fitted span: e^{5} is a 150-fold change across the data,
// far beyond any capacity curve, so the bound only stops runaway fits.
const dexpRateMax = 5.0

// dexpGrid are the scaled rates the double-exponential search starts from.
var dexpGrid = []float64{-4, -1.5, -0.5, 0, 0.5, 1.5, 4}

// dexpCoefMax bounds each double-exponential coefficient, as a multiple of
// the largest measured value (our bound).
const dexpCoefMax = 3.0

// errNoConvergence drops a model whose optimiser did not converge;
// errSingular one whose regressors do not vary.
var (
	errNoConvergence = errors.New("the optimiser did not converge")
	errSingular      = errors.New("too few distinct cycles")
)

// LinearModel is Q = a + b n: a constant fade per cycle, the first
// approximation of cycle-life testing (common practice: a datasheet's "80 %
// after N cycles" is a straight line through two points).
var LinearModel = TrendModel{Name: "linear", Terms: []string{"a", "b"}, minPoints: 4,
	Source:  "constant fade per cycle (common practice)",
	predict: func(p []float64, n float64) float64 { return p[0] + p[1]*n },
	fit:     basisFit(func(n float64) float64 { return n })}

// SqrtModel is Q = a + b sqrt(n): loss of cyclable lithium to a growing SEI
// layer whose growth is diffusion-limited, so loss goes as the square root
// of time or throughput (Ploehn, Ramadass and White, J. Electrochem. Soc. 151
// (2004) A456; Broussely et al., J. Power Sources 146 (2005) 90; references
// from memory).
var SqrtModel = TrendModel{Name: "sqrt", Terms: []string{"a", "b"}, minPoints: 4,
	Source:  "SEI growth, loss as the square root of cycles (Ploehn, Ramadass and White, J. Electrochem. Soc. 151 (2004) A456; reference from memory)",
	predict: func(p []float64, n float64) float64 { return p[0] + p[1]*math.Sqrt(n) },
	fit:     basisFit(math.Sqrt)}

// PowerModel is Q = Q0 - a n^z with z in [PowerZMin, PowerZMax]: the
// empirical power law of cycle-life models (Wang et al., J. Power Sources 196
// (2011) 3942, "Cycle-life model for graphite-LiFePO4 cells"; reference from
// memory). It holds linear (z = 1) and square-root (z = 0.5) fade as special
// cases, and accelerating fade (z > 1).
var PowerModel = TrendModel{Name: "power", Terms: []string{"q0", "a", "z"}, minPoints: 5,
	Source:  "power law in cycles, exponent fitted (Wang et al., J. Power Sources 196 (2011) 3942; reference from memory)",
	predict: func(p []float64, n float64) float64 { return p[0] - p[1]*math.Pow(math.Max(n, 0), p[2]) },
	fit:     powerFit}

// DoubleExpModel is Q = a e^{b n} + c e^{d n}, the empirical capacity model
// of He, Williard, Osterman and Pecht, "Prognostics of lithium-ion batteries
// based on Dempster-Shafer theory and the Bayesian Monte Carlo method",
// J. Power Sources 196 (2011) 10314 (reference from memory), widely fitted
// to the NASA PCoE cells. Rates are bounded to 5 over the fitted span.
var DoubleExpModel = TrendModel{Name: "double_exp", Terms: []string{"a", "b", "c", "d"}, minPoints: 8,
	Source:  "double exponential (He, Williard, Osterman and Pecht, J. Power Sources 196 (2011) 10314; reference from memory)",
	predict: func(p []float64, n float64) float64 { return p[0]*math.Exp(p[1]*n) + p[2]*math.Exp(p[3]*n) },
	fit:     dexpFit}

// DefaultTrendModels are the candidates a forecast compares.
func DefaultTrendModels() []TrendModel {
	return []TrendModel{LinearModel, SqrtModel, PowerModel, DoubleExpModel}
}

// basisFit fits y = a + b g(x) by least squares (closed form).
func basisFit(g func(float64) float64) func(x, y, _ []float64) ([]float64, error) {
	return func(x, y, _ []float64) ([]float64, error) {
		gx := make([]float64, len(x))
		w := make([]float64, len(x))
		for i, v := range x {
			gx[i], w[i] = g(v), 1
		}
		a, b, _, ok := lineFit(gx, y, w)
		if !ok {
			return nil, errSingular
		}
		return []float64{a, b}, nil
	}
}

// lineFit is weighted least squares of y on {1, g}: intercept, slope and
// the weighted residual sum of squares, by centred sums (g and y are well
// scaled here).
func lineFit(g, y, w []float64) (icpt, slope, sse float64, ok bool) {
	var sw, mg, my float64
	for i := range g {
		sw += w[i]
		mg += w[i] * g[i]
		my += w[i] * y[i]
	}
	mg, my = mg/sw, my/sw
	var sgg, sgy, syy float64
	for i := range g {
		dg, dy := g[i]-mg, y[i]-my
		sgg += w[i] * dg * dg
		sgy += w[i] * dg * dy
		syy += w[i] * dy * dy
	}
	if !(sgg > 1e-300) {
		return my, 0, syy, false
	}
	slope = sgy / sgg
	return my - slope*mg, slope, math.Max(0, syy-slope*sgy), true
}

// maxNonlinearPoints bounds the points an optimiser's objective visits.
const maxNonlinearPoints = 50

// thin returns the points for a nonlinear fit with their weights: the points
// themselves (weight 1), or, beyond maxNonlinearPoints, the means of that
// many runs of consecutive points weighted by run length. Least squares on
// the means equals least squares on the points up to the model's curvature
// within a run (a hundredth of the span), far below the noise; it keeps a
// forecast within its time budget on long histories.
func thin(x, y []float64) (xs, ys, w []float64) {
	n := len(x)
	if n <= maxNonlinearPoints {
		w = make([]float64, n)
		for i := range w {
			w[i] = 1
		}
		return x, y, w
	}
	xs = make([]float64, maxNonlinearPoints)
	ys = make([]float64, maxNonlinearPoints)
	w = make([]float64, maxNonlinearPoints)
	for g := range maxNonlinearPoints {
		lo, hi := g*n/maxNonlinearPoints, (g+1)*n/maxNonlinearPoints
		for i := lo; i < hi; i++ {
			xs[g] += x[i]
			ys[g] += y[i]
		}
		c := float64(hi - lo)
		xs[g], ys[g], w[g] = xs[g]/c, ys[g]/c, c
	}
	return xs, ys, w
}

// scaled returns x / span and log(x / span) (-Inf at 0), span being the
// largest x, so that the optimiser works on rates and exponents of order one.
func scaled(x []float64) (s, logS []float64, span float64) {
	span = x[len(x)-1]
	if !(span > 0) {
		span = 1
	}
	s = make([]float64, len(x))
	logS = make([]float64, len(x))
	for i, v := range x {
		s[i] = v / span
		logS[i] = math.Log(s[i])
	}
	return s, logS, span
}

// minimise runs gonum's Nelder-Mead on f over unbounded u; the caller maps u
// into its bounds. A run that stops at an evaluation or iteration limit, or
// on an error, has not converged.
func minimise(f func(u []float64) float64, u0 []float64, simplex float64, patience int) ([]float64, error) {
	res, err := optimize.Minimize(optimize.Problem{Func: f}, u0, &optimize.Settings{
		Converger:       &optimize.FunctionConverge{Absolute: 1e-14, Relative: 1e-7, Iterations: patience},
		FuncEvaluations: 2000,
	}, &optimize.NelderMead{SimplexSize: simplex})
	if err != nil || res.Status != optimize.FunctionConvergence || math.IsNaN(res.F) || math.IsInf(res.F, 0) {
		return nil, errNoConvergence
	}
	return res.X, nil
}

// bounded maps an unbounded u into [lo, hi] (a sine keeps it smooth and
// never stuck at a bound), and back.
func bounded(u, lo, hi float64) float64 { return lo + (hi-lo)*(1+math.Sin(u))/2 }
func unbounded(v, lo, hi float64) float64 {
	return math.Asin(math.Max(-1, math.Min(1, 2*(v-lo)/(hi-lo)-1)))
}

// powerFit is variable projection: for a fixed exponent z the law is linear
// in Q0 and a, solved exactly; gonum's Nelder-Mead searches z.
func powerFit(x, y, warm []float64) ([]float64, error) {
	x, y, wt := thin(x, y)
	_, logS, span := scaled(x)
	g := make([]float64, len(x))
	sse := func(z float64) (q0, a, v float64, ok bool) {
		for i, l := range logS {
			g[i] = math.Exp(z * l) // s^z; 0 at s = 0
		}
		q0, slope, v, ok := lineFit(g, y, wt)
		return q0, -slope, v, ok
	}
	// Start from the best exponent of a 0.1 grid (and the previous
	// solution): the search then only refines.
	z0, best := 1.0, math.Inf(1)
	try := func(z float64) {
		if _, _, v, ok := sse(z); ok && v < best {
			z0, best = z, v
		}
	}
	for z := PowerZMin; z <= PowerZMax+1e-9; z += 0.1 {
		try(z)
	}
	if warm != nil {
		try(warm[2])
	}
	u, err := minimise(func(u []float64) float64 {
		_, _, v, ok := sse(bounded(u[0], PowerZMin, PowerZMax))
		if !ok {
			return math.Inf(1)
		}
		return v
	}, []float64{unbounded(z0, PowerZMin, PowerZMax)}, 0.05, 10)
	if err != nil {
		return nil, err
	}
	z := bounded(u[0], PowerZMin, PowerZMax)
	q0, a, _, ok := sse(z)
	if !ok {
		return nil, errNoConvergence
	}
	// Back from scaled cycles: a s^z = a (n/span)^z.
	return []float64{q0, a / math.Pow(span, z), z}, nil
}

// dexpFit is variable projection: for fixed rates the law is linear in a
// and c (two-column least squares); gonum's Nelder-Mead searches the rates.
func dexpFit(x, y, warm []float64) ([]float64, error) {
	x, y, wt := thin(x, y)
	s, _, span := scaled(x)
	// Each term stays within a few times the data's size: two near-equal
	// rates with huge opposite coefficients would fit a polynomial-like curve
	// that is no longer the law.
	var ymax float64
	for _, v := range y {
		ymax = math.Max(ymax, math.Abs(v))
	}
	coefMax := dexpCoefMax * ymax
	// solve is the two-column least squares for the terms u = e^{b s} and
	// w = e^{d s}: the coefficients and the residual sum of squares, not ok
	// when the columns are (nearly) one or a coefficient is out of bounds.
	solve := func(u, w []float64) (a, c, sse float64, ok bool) {
		var suu, suw, sww, suy, swy float64
		for i := range u {
			suu += wt[i] * u[i] * u[i]
			suw += wt[i] * u[i] * w[i]
			sww += wt[i] * w[i] * w[i]
			suy += wt[i] * u[i] * y[i]
			swy += wt[i] * w[i] * y[i]
		}
		det := suu*sww - suw*suw
		if !(det > 1e-12*suu*sww) {
			return 0, 0, 0, false
		}
		a = (sww*suy - suw*swy) / det
		c = (suu*swy - suw*suy) / det
		if math.Abs(a) > coefMax || math.Abs(c) > coefMax {
			return a, c, 0, false
		}
		for i := range u {
			e := y[i] - a*u[i] - c*w[i]
			sse += wt[i] * e * e
		}
		return a, c, sse, true
	}
	terms := func(rate float64, into []float64) []float64 {
		for i, si := range s {
			into[i] = math.Exp(rate * si)
		}
		return into
	}
	u, w := make([]float64, len(s)), make([]float64, len(s))
	rates := func(p []float64) (b, d float64) {
		return bounded(p[0], -dexpRateMax, dexpRateMax), bounded(p[1], -dexpRateMax, dexpRateMax)
	}
	f := func(p []float64) float64 {
		b, d := rates(p)
		_, _, v, ok := solve(terms(b, u), terms(d, w))
		if !ok {
			return math.Inf(1)
		}
		return v
	}
	// The objective has several valleys: start from the best of a coarse grid
	// of rate pairs (b > d; the terms are interchangeable) and the previous
	// solution, so the result does not hang on one starting point.
	grid := make([][]float64, len(dexpGrid))
	for i, r := range dexpGrid {
		grid[i] = terms(r, make([]float64, len(s)))
	}
	start, bestV := []float64(nil), math.Inf(1)
	for i := range dexpGrid {
		for j := range i {
			if _, _, v, ok := solve(grid[i], grid[j]); ok && v < bestV {
				bestV = v
				start = []float64{unbounded(dexpGrid[i], -dexpRateMax, dexpRateMax), unbounded(dexpGrid[j], -dexpRateMax, dexpRateMax)}
			}
		}
	}
	if warm != nil {
		p := []float64{unbounded(warm[1]*span, -dexpRateMax, dexpRateMax), unbounded(warm[3]*span, -dexpRateMax, dexpRateMax)}
		if v := f(p); v < bestV {
			start = p
		}
	}
	if start == nil {
		return nil, errNoConvergence
	}
	p, err := minimise(f, start, 0.1, 5)
	if err != nil {
		return nil, err
	}
	b, d := rates(p)
	a, c, _, ok := solve(terms(b, u), terms(d, w))
	if !ok {
		return nil, errNoConvergence
	}
	return []float64{a, b / span, c, d / span}, nil
}
