package selection

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// Nth gives the order statistic a full sort (slices.Sort, the reference)
// gives, with every value on its side: every k of small few-valued inputs,
// and the middle of large sorted, reversed and organ-pipe inputs (the
// shapes that make a plain quickselect slow).
func TestNthMatchesSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	check := func(xs []float64, k int) {
		t.Helper()
		want := slices.Sorted(slices.Values(xs))
		s := slices.Clone(xs)
		if got := Nth(s, k); got != want[k] || s[k] != want[k] {
			t.Fatalf("Nth(n=%d, %d) = %v (s[k] %v), the sort gives %v", len(xs), k, got, s[k], want[k])
		}
		for i := range s {
			if (i < k && s[i] > s[k]) || (i > k && s[i] < s[k]) {
				t.Fatalf("Nth(n=%d, %d) leaves %v at %d out of place", len(xs), k, s[i], i)
			}
		}
	}
	for n := 1; n <= 40; n++ {
		for range 20 {
			xs := make([]float64, n)
			for i := range xs {
				xs[i] = float64(rng.IntN(7))
			}
			for k := range n {
				check(xs, k)
			}
		}
	}
	// Ranges above 600 values take Floyd and Rivest's sampling step: random
	// values, heavy ties and every k near the ends and the middle.
	for _, n := range []int{601, 602, 999, 4096, 125_000} {
		for _, levels := range []int{3, 1000, 0} { // 0: continuous
			xs := make([]float64, n)
			for i := range xs {
				if levels == 0 {
					xs[i] = rng.NormFloat64()
				} else {
					xs[i] = float64(rng.IntN(levels))
				}
			}
			for _, k := range []int{0, 1, n / 3, n/2 - 1, n / 2, n - 2, n - 1, rng.IntN(n)} {
				check(xs, k)
			}
		}
	}
	for _, n := range []int{1000, 1001, 50_000} {
		sorted := make([]float64, n)
		for i := range sorted {
			sorted[i] = float64(i)
		}
		rev := slices.Clone(sorted)
		slices.Reverse(rev)
		pipe := make([]float64, n)
		for i := range pipe {
			pipe[i] = float64(min(i, n-1-i))
		}
		for _, xs := range [][]float64{sorted, rev, pipe} {
			check(xs, n/2)
			check(xs, 0)
			check(xs, n-1)
		}
	}
}

// BenchmarkNth is the median of 125,000 values (a pack's Theil-Sen slopes
// at 500 flights), against sorting them (slices.Sort), the floor any
// selection must beat:
//
//	go test -bench Nth -run '^$' ./internal/selection
func BenchmarkNth(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 6))
	xs := make([]float64, 125_000)
	for i := range xs {
		xs[i] = rng.NormFloat64()
	}
	s := make([]float64, len(xs))
	b.Run("nth", func(b *testing.B) {
		for b.Loop() {
			copy(s, xs)
			Nth(s, len(s)/2)
		}
	})
	b.Run("sort", func(b *testing.B) {
		for b.Loop() {
			copy(s, xs)
			slices.Sort(s)
		}
	})
}
