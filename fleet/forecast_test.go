package fleet

import (
	"math"
	"testing"
	"time"
)

// ForecastAt saturates at the 50-year horizon instead of overflowing. A
// time.Duration is an int64 count of nanoseconds, about +-292 years (Go
// time package documentation); 300 units at 1e-12 a day is 3e14 days,
// which as a Duration wraps around (to a date in 1734 from 2026).
func TestForecastAtSaturates(t *testing.T) {
	now := time.Date(2026, 12, 2, 6, 0, 0, 0, time.UTC)
	at := func(days float64) *time.Time {
		d := now.Add(time.Duration(days * float64(24*time.Hour)))
		return &d
	}
	cases := []struct {
		name              string
		remaining, perDay float64
		want              *time.Time
		why               string
	}{
		{"rate 0", 300, 0, nil, ForecastNoUse},
		{"rate 1e-12", 300, 1e-12, nil, ForecastBeyondHorizon},
		{"rate 1e12", 300, 1e12, at(3e-10), ""}, // 300 / 1e12 days = 25.92 microseconds
		{"negative rate", 300, -1, nil, ForecastNoUse},
		{"NaN rate", 300, math.NaN(), nil, ForecastNoUse},
		{"infinite rate", 300, math.Inf(1), &now, ""},
		{"nothing left", 0, 0, &now, ""},
		{"one day", 2, 2, at(1), ""},
		// 50 years of 365.2425 days is 18262.125 days: on the horizon still
		// dated, a day past it not.
		{"on the horizon", 18262.125, 1, at(18262.125), ""},
		{"past the horizon", 18263.125, 1, nil, ForecastBeyondHorizon},
		{"NaN remaining", math.NaN(), 1, nil, ForecastBeyondHorizon},
	}
	for _, c := range cases {
		got, why := ForecastAt(now, c.remaining, c.perDay)
		if why != c.why || (got == nil) != (c.want == nil) || (got != nil && !got.Equal(*c.want)) {
			t.Errorf("%s: %v (%q), want %v (%q)", c.name, got, why, c.want, c.why)
		}
		if got != nil && (got.Before(now) || got.After(now.AddDate(ForecastHorizonYears, 0, 1))) {
			t.Errorf("%s: %v outside [now, now + 50 years]", c.name, got)
		}
	}
	if d, why := ForecastIn(now, math.Inf(1)); d != nil || why != ForecastBeyondHorizon {
		t.Errorf("ForecastIn(+Inf) = %v %q", d, why)
	}
	if d, _ := ForecastIn(now, -5); d == nil || !d.Equal(now) {
		t.Errorf("ForecastIn(-5) = %v, want now", d)
	}
}
