package wear

import (
	"math"

	"github.com/rotorwright/rotorwright/fleet"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Basis is a regression model that is linear in its coefficients:
// y = sum_j c_j f_j(x), with f returning the regressors at x.
type Basis struct {
	Name  string
	Terms []string // names of the coefficients, in order
	F     func(x float64) []float64
}

// LinearBasis is y = a + b x.
var LinearBasis = Basis{Name: "linear", Terms: []string{"a", "b"},
	F: func(x float64) []float64 { return []float64{1, x} }}

// Fit is an ordinary least-squares fit of a Basis, with what is needed for
// prediction intervals at new x.
type Fit struct {
	Model       string
	Terms       []string
	Coef        []float64
	N           int     // observations
	SSE         float64 // residual sum of squares
	ResidualSD  float64 // sqrt(SSE / (N - p))
	RSquared    float64 // 1 - SSE/SST (SST about the mean)
	AdjRSquared float64
	AICc        float64 // small-sample AIC, k = p + 1 (the variance counts)

	basis Basis
	r     [][]float64 // upper-triangular R of X = QR, p x p
}

// FitOLS fits basis b to (x, y) by least squares through a QR factorisation,
// which keeps full accuracy on ill-conditioned data (checked on NIST StRD).
func FitOLS(b Basis, x, y []float64) (Fit, error) {
	n := len(x)
	if n != len(y) {
		return Fit{}, fleet.Errorf(fleet.EINVALID, "x and y differ in length (%d, %d)", len(x), len(y))
	}
	p := len(b.Terms)
	if n < p+2 {
		return Fit{}, fleet.Errorf(fleet.EUNPROCESSABLE, "%s fit needs at least %d points, got %d", b.Name, p+2, n)
	}
	X := mat.NewDense(n, p, nil)
	for i, xi := range x {
		if !finite(xi) || !finite(y[i]) {
			return Fit{}, fleet.Errorf(fleet.EINVALID, "point %d is not finite", i)
		}
		X.SetRow(i, b.F(xi))
	}
	var qr mat.QR
	qr.Factorize(X)
	var beta mat.VecDense
	if err := qr.SolveVecTo(&beta, false, mat.NewVecDense(n, append([]float64(nil), y...))); err != nil {
		return Fit{}, fleet.Errorf(fleet.EUNPROCESSABLE, "%s fit is singular (too few distinct x)", b.Name)
	}
	var R mat.Dense
	qr.RTo(&R)
	f := Fit{Model: b.Name, Terms: b.Terms, N: n, basis: b, Coef: make([]float64, p), r: make([][]float64, p)}
	for j := 0; j < p; j++ {
		f.Coef[j] = beta.AtVec(j)
		f.r[j] = make([]float64, p)
		for k := j; k < p; k++ {
			f.r[j][k] = R.At(j, k)
		}
	}
	mean := 0.0
	for _, v := range y {
		mean += v
	}
	mean /= float64(n)
	var sst float64
	for i, xi := range x {
		e := y[i] - f.Predict(xi)
		f.SSE += e * e
		sst += (y[i] - mean) * (y[i] - mean)
	}
	dof := float64(n - p)
	f.ResidualSD = math.Sqrt(f.SSE / dof)
	if sst > 0 {
		f.RSquared = 1 - f.SSE/sst
		f.AdjRSquared = 1 - (f.SSE/dof)/(sst/float64(n-1))
	}
	k := float64(p + 1)
	nf := float64(n)
	// A perfect fit has no finite AIC; a tiny floor keeps the ranking usable.
	// With n <= k + 1 the small-sample correction is undefined: +Inf ranks
	// such a fit last.
	f.AICc = math.Inf(1)
	if nf-k-1 > 0 {
		f.AICc = nf*math.Log(math.Max(f.SSE/nf, 1e-300)) + 2*k + 2*k*(k+1)/(nf-k-1)
	}
	return f, nil
}

// Predict returns the fitted value at x.
func (f Fit) Predict(x float64) float64 {
	v := 0.0
	for j, fj := range f.basis.F(x) {
		v += f.Coef[j] * fj
	}
	return v
}

// PredictionInterval returns the two-sided prediction interval, at level
// (e.g. 0.95), for one new observation at x: yhat ± t(n-p) s sqrt(1 + x0'(X'X)^-1 x0).
func (f Fit) PredictionInterval(x, level float64) (lo, hi float64) {
	return f.interval(x, f.tQuantile(level))
}

// tQuantile is the two-sided Student-t quantile for the fit's residual
// degrees of freedom.
func (f Fit) tQuantile(level float64) float64 {
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(f.N - len(f.Coef))}.Quantile(0.5 + level/2)
}

func (f Fit) interval(x, t float64) (lo, hi float64) {
	x0 := f.basis.F(x)
	p := len(x0)
	// (X'X)^-1 = R^-1 R^-T, so x0'(X'X)^-1 x0 = |z|^2 with R' z = x0.
	z := make([]float64, p)
	lev := 0.0
	for i := 0; i < p; i++ {
		s := x0[i]
		for j := 0; j < i; j++ {
			s -= f.r[j][i] * z[j]
		}
		z[i] = s / f.r[i][i]
		lev += z[i] * z[i]
	}
	half := t * f.ResidualSD * math.Sqrt(1+lev)
	yhat := f.Predict(x)
	return yhat - half, yhat + half
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
