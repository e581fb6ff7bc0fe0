package wear

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// readNorris reads the data lines (61 to 96) of testdata/NIST_StRD_Norris.dat.
func readNorris(t *testing.T) (x, y []float64) {
	t.Helper()
	f, err := os.Open("testdata/NIST_StRD_Norris.dat")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for line := 1; sc.Scan(); line++ {
		if line < 61 {
			continue
		}
		fs := strings.Fields(sc.Text())
		if len(fs) != 2 {
			continue
		}
		yv, err1 := strconv.ParseFloat(fs[0], 64)
		xv, err2 := strconv.ParseFloat(fs[1], 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("line %d: %q", line, sc.Text())
		}
		x, y = append(x, xv), append(y, yv)
	}
	if len(x) != 36 {
		t.Fatalf("read %d observations, want 36", len(x))
	}
	return x, y
}

func TestFitOLSNorris(t *testing.T) {
	x, y := readNorris(t)
	f, err := FitOLS(LinearBasis, x, y)
	if err != nil {
		t.Fatal(err)
	}
	// NIST StRD "Norris" certified values (file header, lines 31-46).
	relNear(t, "B0", f.Coef[0], -0.262323073774029, 1e-9)
	relNear(t, "B1", f.Coef[1], 1.00211681802045, 1e-9)
	relNear(t, "residual SD", f.ResidualSD, 0.884796396144373, 1e-9)
	relNear(t, "R^2", f.RSquared, 0.999993745883712, 1e-9)
	relNear(t, "SSE", f.SSE, 26.6173985294224, 1e-9)
	// Fit-quality figures from the certified SSE and R^2: adjusted R^2 =
	// 1 - (1 - R^2)(n - 1)/(n - p); AICc = n ln(SSE/n) + 2k + 2k(k+1)/(n-k-1)
	// with k = p + 1 (Hurvich and Tsai 1989; Burnham and Anderson 2002).
	relNear(t, "adjusted R^2", f.AdjRSquared, 1-(1-0.999993745883712)*35/34, 1e-9)
	relNear(t, "AICc", f.AICc, 36*math.Log(26.6173985294224/36)+6+2*3*4/32.0, 1e-9)
	// And the same coefficients as gonum's stat.LinearRegression.
	a, b := stat.LinearRegression(x, y, nil, false)
	relNear(t, "B0 vs gonum", f.Coef[0], a, 1e-9)
	relNear(t, "B1 vs gonum", f.Coef[1], b, 1e-9)
}

func TestPredictionInterval(t *testing.T) {
	// Student-t quantile t(0.975, 34) = 2.032 (standard t table).
	near(t, "t", distuv.StudentsT{Mu: 0, Sigma: 1, Nu: 34}.Quantile(0.975), 2.032, 5e-4)

	// Textbook simple-regression prediction interval (e.g. Montgomery and
	// Runger, Applied Statistics and Probability for Engineers, ch. 11):
	// yhat ± t s sqrt(1 + 1/n + (x0 - xbar)^2 / Sxx), computed here directly
	// and compared with the QR route on the Norris data.
	x, y := readNorris(t)
	f, _ := FitOLS(LinearBasis, x, y)
	var xbar, sxx float64
	for _, v := range x {
		xbar += v
	}
	xbar /= float64(len(x))
	for _, v := range x {
		sxx += (v - xbar) * (v - xbar)
	}
	tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(len(x) - 2)}.Quantile(0.975)
	for _, x0 := range []float64{0, 500, 1200} {
		half := tq * 0.884796396144373 * math.Sqrt(1+1/float64(len(x))+(x0-xbar)*(x0-xbar)/sxx)
		yhat := -0.262323073774029 + 1.00211681802045*x0
		lo, hi := f.PredictionInterval(x0, 0.95)
		near(t, "PI low", lo, yhat-half, 1e-8)
		near(t, "PI high", hi, yhat+half, 1e-8)
	}
}

func TestFitOLSRefuses(t *testing.T) {
	if _, err := FitOLS(LinearBasis, []float64{1, 2, 3}, []float64{1, 2}); err == nil {
		t.Error("length mismatch accepted")
	}
	if _, err := FitOLS(LinearBasis, []float64{1, 2, 3}, []float64{1, 2, 3}); err == nil {
		t.Error("too few points accepted")
	}
	if _, err := FitOLS(LinearBasis, []float64{1, 1, 1, 1}, []float64{1, 2, 3, 4}); err == nil {
		t.Error("single x value accepted")
	}
}
