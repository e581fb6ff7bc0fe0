package telemetry

import (
	"fmt"
	"slices"
)

// Trapezoid integrates y over t by the trapezoidal rule over the actual time
// steps, so irregular sampling is handled. It is exact for piecewise-linear y.
// It panics if the lengths differ (a programming error, like an index out of range).
func Trapezoid(t, y []float64) float64 {
	if len(t) != len(y) {
		panic(fmt.Sprintf("telemetry.Trapezoid: %d times but %d values", len(t), len(y)))
	}
	var s float64
	for i := 1; i < len(t); i++ {
		s += (t[i] - t[i-1]) * (y[i] + y[i-1])
	}
	return s / 2
}

// trapezoidRange integrates y over samples lo..hi inclusive.
func trapezoidRange(t, y []float64, lo, hi int) float64 {
	return Trapezoid(t[lo:hi+1], y[lo:hi+1])
}

// meanOver is the time-weighted mean of y over samples lo..hi inclusive; a
// single sample is its own mean.
func meanOver(t, y []float64, lo, hi int) float64 {
	if hi <= lo {
		return y[lo]
	}
	return trapezoidRange(t, y, lo, hi) / (t[hi] - t[lo])
}

// median returns the median of xs without changing xs.
func median(xs []float64) float64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

func ptr(v float64) *float64 { return &v }
