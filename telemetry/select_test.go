package telemetry

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/rotorwright/rotorwright/internal/selection"
)

// sortedMedian is the median by a full sort (slices.Sort, the reference).
func sortedMedian(xs []float64) float64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// Selection gives the same order statistics as a full sort: every k of
// small inputs, and the median of random, sorted, reversed, constant,
// few-valued and NaN-holding inputs, with the input left unchanged.
func TestMedianBySelectionMatchesSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for n := 1; n <= 40; n++ {
		for range 20 {
			xs := make([]float64, n)
			for i := range xs {
				xs[i] = float64(rng.IntN(7))
			}
			want := slices.Sorted(slices.Values(xs))
			for k := range n {
				s := slices.Clone(xs)
				selection.Nth(s, k)
				if s[k] != want[k] {
					t.Fatalf("selection.Nth(%v, %d) = %v, the sort gives %v", xs, k, s[k], want[k])
				}
				for i := range s {
					if (i < k && s[i] > s[k]) || (i > k && s[i] < s[k]) {
						t.Fatalf("selection.Nth(%v, %d) leaves %v out of place: %v", xs, k, s[i], s)
					}
				}
			}
		}
	}
	inputs := map[string][]float64{}
	for _, n := range []int{1, 2, 3, 1000, 1001, 90_000} {
		r := make([]float64, n)
		for i := range r {
			r[i] = rng.NormFloat64()
		}
		inputs["random"] = r
		inputs["sorted"] = slices.Sorted(slices.Values(r))
		rev := slices.Clone(inputs["sorted"])
		slices.Reverse(rev)
		inputs["reversed"] = rev
		inputs["constant"] = slices.Repeat([]float64{3.7}, n)
		few := make([]float64, n)
		for i := range few {
			few[i] = float64(i % 3)
		}
		inputs["few"] = few
		withNaN := slices.Clone(r)
		withNaN[n/2] = math.NaN()
		inputs["nan"] = withNaN
		for name, xs := range inputs {
			before := slices.Clone(xs)
			got, want := median(xs), sortedMedian(xs)
			if got != want && !(got != got && want != want) {
				t.Fatalf("%s n=%d: median %v, the sort gives %v", name, n, got, want)
			}
			if !slices.EqualFunc(xs, before, func(a, b float64) bool { return a == b || (a != a && b != b) }) {
				t.Fatalf("%s n=%d: median changed its input", name, n)
			}
		}
	}
}

// meansOver gives meanOver's results to the bit, for the series and its
// squares: spans without blanks, with blanks, all blank, one sample.
func TestMeansOverMatchesMeanOver(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for range 500 {
		n := 1 + rng.IntN(60)
		ts, y := make([]float64, n), make([]float64, n)
		for i := range ts {
			ts[i] = float64(i)*0.02 + rng.Float64()*0.01
			y[i] = 3000 + 4000*rng.Float64()
			if p := rng.IntN(4); p == 0 && rng.IntN(3) == 0 {
				y[i] = math.NaN()
			}
		}
		if rng.IntN(10) == 0 {
			for i := range y {
				y[i] = math.NaN()
			}
		}
		lo := rng.IntN(n)
		hi := lo + rng.IntN(n-lo)
		sq := make([]float64, n)
		for i, v := range y {
			sq[i] = v * v
		}
		m, m2 := meansOver(ts, y, lo, hi)
		w, w2 := meanOver(ts, y, lo, hi), meanOver(ts, sq, lo, hi)
		same := func(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) || (a != a && b != b) }
		if !same(m, w) || !same(m2, w2) {
			t.Fatalf("meansOver(%v, %d..%d) = %v, %v; meanOver gives %v, %v", y, lo, hi, m, m2, w, w2)
		}
	}
}
