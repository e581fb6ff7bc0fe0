// Package selection finds order statistics without sorting: the medians of
// flight-log series (telemetry) and of Theil-Sen's pairwise slopes (wear).
package selection

import (
	"math"
	"math/bits"
	"slices"
)

// Nth reorders s (no NaN) so that s[k] is the value a sort puts there, none
// after it less and none before it greater, and returns it: Floyd and
// Rivest's SELECT (Communications of the ACM 18(3), 1975, Algorithm 489).
// On a range of more than 600 values it first selects k within a small
// sample range around it, so that the value it partitions by lies close to
// the k-th and each round drops most of the range: about n + min(k, n-k)
// comparisons, against about 3n for a quickselect with a median-of-three
// pivot (a Theil-Sen median over 125,000 slopes took 1.3 ms that way).
// After 2*log2(n) rounds it sorts what is left, so that no input (logs come
// from outside) makes it quadratic.
func Nth(s []float64, k int) float64 {
	if len(s) > 0 {
		selectFR(s, 0, len(s)-1, k, 2*bits.Len(uint(len(s))))
	}
	return s[k]
}

// selectFR is SELECT on s[left..right] with a budget of rounds.
func selectFR(s []float64, left, right, k, budget int) {
	for right > left {
		if budget == 0 {
			slices.Sort(s[left : right+1])
			return
		}
		budget--
		if right-left > 600 {
			// The sample range: its k-th value estimates the range's, with
			// the published constants (sample size n^(2/3)/2 and a shift of
			// half a standard deviation towards the nearer end).
			n := float64(right - left + 1)
			i := float64(k - left + 1)
			z := math.Log(n)
			sn := 0.5 * math.Exp(2*z/3)
			sd := 0.5 * math.Sqrt(z*sn*(n-sn)/n)
			if i < n/2 {
				sd = -sd
			}
			lo := max(left, int(float64(k)-i*sn/n+sd))
			hi := min(right, int(float64(k)+(n-i)*sn/n+sd))
			selectFR(s, lo, hi, k, budget)
		}
		// Partition s[left..right] by t = s[k], with sentinels at both ends.
		t := s[k]
		i, j := left, right
		s[left], s[k] = s[k], s[left]
		if s[right] > t {
			s[right], s[left] = s[left], s[right]
		}
		for i < j {
			s[i], s[j] = s[j], s[i]
			i, j = i+1, j-1
			for s[i] < t {
				i++
			}
			for s[j] > t {
				j--
			}
		}
		if s[left] == t {
			s[left], s[j] = s[j], s[left]
		} else {
			j++
			s[j], s[right] = s[right], s[j]
		}
		// Now t sits at j, none before it greater, none after it less.
		if j <= k {
			left = j + 1
		}
		if k <= j {
			right = j - 1
		}
	}
}
