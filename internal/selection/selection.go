// Package selection finds order statistics without sorting: the medians of
// flight-log series (telemetry) and of Theil-Sen's pairwise slopes (wear).
package selection

import (
	"math/bits"
	"slices"
)

// Nth reorders s (no NaN) so that s[k] is the value a sort puts there, none
// after it less and none before it greater, and returns it: quickselect
// (Hoare) with a median-of-three pivot. After 2*log2(n) rounds it sorts
// what is left, so that no input (logs come from outside) makes it
// quadratic.
func Nth(s []float64, k int) float64 {
	lo, hi := 0, len(s)-1
	for budget := 2 * bits.Len(uint(len(s))); lo < hi; budget-- {
		if budget == 0 {
			slices.Sort(s[lo : hi+1])
			return s[k]
		}
		mid := lo + (hi-lo)/2
		if s[mid] < s[lo] {
			s[mid], s[lo] = s[lo], s[mid]
		}
		if s[hi] < s[lo] {
			s[hi], s[lo] = s[lo], s[hi]
		}
		if s[hi] < s[mid] {
			s[hi], s[mid] = s[mid], s[hi]
		}
		p := s[mid]
		i, j := lo, hi
		for i <= j {
			for s[i] < p {
				i++
			}
			for s[j] > p {
				j--
			}
			if i <= j {
				s[i], s[j] = s[j], s[i]
				i, j = i+1, j-1
			}
		}
		// Now s[lo..j] <= p <= s[i..hi], and anything between equals p.
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return s[k]
		}
	}
	return s[k]
}
