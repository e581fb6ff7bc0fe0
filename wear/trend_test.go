package wear

import (
	"math/rand/v2"
	"slices"
	"testing"
)

func TestTheilSenHandExample(t *testing.T) {
	// Theil-Sen (Sen 1968), checked by hand: points (1,1) (2,3) (3,2) (4,5);
	// pairwise slopes 2, 0.5, 4/3, -1, 1, 3 -> sorted -1, 0.5, 1, 4/3, 2, 3,
	// median (1 + 4/3)/2 = 7/6. Residuals y - 7/6 x: -1/6, 2/3, -3/2, 1/3 ->
	// median (-1/6 + 1/3)/2 = 1/12.
	s, c, err := TheilSen([]float64{1, 2, 3, 4}, []float64{1, 3, 2, 5})
	if err != nil {
		t.Fatal(err)
	}
	near(t, "slope", s, 7.0/6, 1e-15)
	near(t, "intercept", c, 1.0/12, 1e-15)
	if _, _, err := TheilSen([]float64{1, 1}, []float64{1, 2}); err == nil {
		t.Error("no distinct x accepted")
	}
}

func TestTheilSenOutlier(t *testing.T) {
	// y = 2x + 1 with one wild point: 36 of the 45 pairwise slopes are
	// exactly 2, so the median is 2 and the intercept 1, while least squares
	// is dragged away (Sen 1968: breakdown point about 29 %).
	x := make([]float64, 10)
	y := make([]float64, 10)
	for i := range x {
		x[i], y[i] = float64(i), 2*float64(i)+1
	}
	y[7] = 100
	s, c, err := TheilSen(x, y)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "slope", s, 2, 1e-15)
	near(t, "intercept", c, 1, 1e-15)
	ols, _ := FitOLS(LinearBasis, x, y)
	if abs(ols.Coef[1]-2) < 1 {
		t.Errorf("least squares slope %v unexpectedly robust", ols.Coef[1])
	}
}

func TestTrend(t *testing.T) {
	// Rising efficiency index 1.00, 1.01, ..., 1.09 over 10 flights, after
	// 5 older flights that must fall outside the window. Hand figures:
	// slope 0.01/flight, span 9 flights, baseline = median of the first five
	// (1.02): rise 100 * 0.09 / 1.02 = 8.8235 %.
	vals := []float64{5, 5, 5, 5, 5}
	for i := range 10 {
		vals = append(vals, 1+0.01*float64(i))
	}
	r, err := Trend(vals, 10, 5)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "slope", r.Slope, 0.01, 1e-12)
	near(t, "baseline", r.BaselineMedian, 1.02, 1e-12)
	near(t, "rise %", r.RisePct, 100*0.09/1.02, 1e-9)
	if !r.Flag || r.N != 10 {
		t.Errorf("limit 5 %%: %+v", r)
	}
	if r, _ := Trend(vals, 10, 10); r.Flag {
		t.Errorf("limit 10 %%: flagged %+v", r)
	}
	if _, err := Trend([]float64{1, 2}, 0, 5); err == nil {
		t.Error("two flights accepted")
	}
}

// median by selection gives exactly what sorting and taking the middle (the
// mean of the middle pair for even length) gives, on random values with
// many ties, odd and even lengths, already sorted and reversed input.
func TestMedianMatchesSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	for trial := 0; trial < 2000; trial++ {
		n := 1 + rng.IntN(60)
		v := make([]float64, n)
		for i := range v {
			switch trial % 4 {
			case 0:
				v[i] = rng.NormFloat64()
			case 1:
				v[i] = float64(rng.IntN(4)) // ties
			case 2:
				v[i] = float64(i) // sorted
			default:
				v[i] = float64(n - i) // reversed
			}
		}
		ref := slices.Clone(v)
		slices.Sort(ref)
		want := ref[n/2]
		if n%2 == 0 {
			want = (ref[n/2-1] + ref[n/2]) / 2
		}
		if got := median(slices.Clone(v)); got != want {
			t.Fatalf("median of %v = %v, sorted middle %v", v, got, want)
		}
	}
}
