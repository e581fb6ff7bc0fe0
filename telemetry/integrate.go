package telemetry

import (
	"fmt"
	"math"
	"slices"

	"github.com/rotorwright/rotorwright/internal/selection"
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

// integral is the trapezoidal integral of y over the intervals whose both
// ends have a reading (y not NaN), and the time those intervals cover;
// gap says whether any interval was left out.
func integral(t, y []float64) (s, covered float64, gap bool) {
	for i := 1; i < len(t); i++ {
		a, b := y[i-1], y[i]
		if a != a || b != b {
			gap = true
			continue
		}
		s += (t[i] - t[i-1]) * (a + b)
		covered += t[i] - t[i-1]
	}
	return s / 2, covered, gap
}

// meanOver is the time-weighted mean of y over samples lo..hi inclusive,
// over the intervals whose both ends have a reading; a lone reading is its
// own mean, and no reading gives NaN.
func meanOver(t, y []float64, lo, hi int) float64 {
	s, covered, gap := integral(t[lo:hi+1], y[lo:hi+1])
	switch {
	case !gap && hi > lo:
		return s / (t[hi] - t[lo])
	case covered > 0:
		return s / covered
	}
	// No interval: the mean of the readings (one, or isolated ones).
	var sum float64
	n := 0
	for _, v := range y[lo : hi+1] {
		if v == v {
			sum += v
			n++
		}
	}
	return sum / float64(n) // NaN when n is 0
}

// meansOver is meanOver of y and of y squared over samples lo..hi, in one
// pass: each sum is taken in meanOver's order, so both are meanOver's
// results to the bit.
func meansOver(t, y []float64, lo, hi int) (mean, meanSq float64) {
	var ms meanSums
	for i := lo + 1; i <= hi; i++ {
		a, b := y[i-1], y[i]
		if a != a || b != b {
			ms.gap = true
			continue
		}
		ms.add(t[i]-t[i-1], a, b)
	}
	return ms.means(t, y, lo, hi)
}

// meanSums are meansOver's running sums, for passes that gather them
// beside other figures: add each interval of lo..hi with a reading at both
// ends in order, set gap for any other.
type meanSums struct {
	s, s2, covered float64
	gap            bool
}

func (ms *meanSums) add(dt, a, b float64) {
	ms.s += dt * (a + b)
	ms.s2 += dt * (a*a + b*b)
	ms.covered += dt
}

// means finishes meansOver from the sums over samples lo..hi of y.
func (ms *meanSums) means(t, y []float64, lo, hi int) (mean, meanSq float64) {
	yy := y[lo : hi+1]
	finish := func(s float64, square bool) float64 {
		switch {
		case !ms.gap && hi > lo:
			return s / 2 / (t[hi] - t[lo])
		case ms.covered > 0:
			return s / 2 / ms.covered
		}
		var sum float64
		n := 0
		for _, v := range yy {
			if v == v {
				if square {
					v *= v
				}
				sum += v
				n++
			}
		}
		return sum / float64(n) // NaN when n is 0
	}
	return finish(ms.s, false), finish(ms.s2, true)
}

// bridge fills the blanks (NaN) of y that lie between two readings at most
// maxGapS apart by linear interpolation in time, so that figures combining
// columns sample by sample, and integrals, span short dropouts; blanks in
// longer gaps, and before the first or after the last reading, stay NaN. A
// linear fill never goes beyond its two readings, so extremes over the
// filled series are extremes over the readings. y itself is returned when
// it has no blank; uncovered is the time in intervals still touching a blank.
func bridge(t, y []float64, maxGapS float64) (out []float64, uncovered float64) {
	first := slices.IndexFunc(y, func(v float64) bool { return v != v })
	if first < 0 {
		return y, 0
	}
	out = slices.Clone(y)
	prev := -1 // last reading
	for i := range out {
		if out[i] != out[i] {
			continue
		}
		if prev >= 0 && i > prev+1 && t[i]-t[prev] <= maxGapS {
			a, b := out[prev], out[i]
			lo, hi := min(a, b), max(a, b)
			for k := prev + 1; k < i; k++ {
				// Clamped, so rounding cannot step past either reading.
				out[k] = min(hi, max(lo, a+(b-a)*(t[k]-t[prev])/(t[i]-t[prev])))
			}
		}
		prev = i
	}
	for i := 1; i < len(out); i++ {
		if out[i] != out[i] || out[i-1] != out[i-1] {
			uncovered += t[i] - t[i-1]
		}
	}
	return out, uncovered
}

// least is the least reading of y (NaN blanks skipped), the one a scan
// from the start finds; ok is false when there is none. Four running minima over interleaved samples, then the
// least of them: a minimum does not depend on the order it is taken in, and
// four chains of compares run side by side where one waits on each.
func least(y []float64) (lo float64, ok bool) {
	m0, m1, m2, m3 := math.Inf(1), math.Inf(1), math.Inf(1), math.Inf(1)
	i := 0
	for ; i+4 <= len(y); i += 4 {
		if v := y[i]; v < m0 {
			m0 = v
		}
		if v := y[i+1]; v < m1 {
			m1 = v
		}
		if v := y[i+2]; v < m2 {
			m2 = v
		}
		if v := y[i+3]; v < m3 {
			m3 = v
		}
	}
	for ; i < len(y); i++ {
		if v := y[i]; v < m0 {
			m0 = v
		}
	}
	lo = m0
	for _, v := range [...]float64{m1, m2, m3} {
		if v < lo {
			lo = v
		}
	}
	if lo == 0 {
		// +0 and -0 tie: the first one in the series is the one a single
		// scan reports, so take that scan.
		lo = math.Inf(1)
		for _, v := range y {
			if v < lo {
				lo = v
			}
		}
	}
	return lo, lo < math.Inf(1)
}

// median returns the median of xs without changing xs: the middle order
// statistics found by selection on a copy (expected linear time), the same
// values a full sort gives.
func median(xs []float64) float64 {
	s := slices.Clone(xs)
	n := len(s)
	if slices.ContainsFunc(s, func(v float64) bool { return v != v }) {
		slices.Sort(s) // NaN sorts first; selection assumes none
		if n%2 == 1 {
			return s[n/2]
		}
		return (s[n/2-1] + s[n/2]) / 2
	}
	selection.Nth(s, n/2)
	if n%2 == 1 {
		return s[n/2]
	}
	// After selection s[:n/2] holds the lower half, whose largest is the
	// other middle value.
	return (slices.Max(s[:n/2]) + s[n/2]) / 2
}

func ptr(v float64) *float64 { return &v }
