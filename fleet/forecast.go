package fleet

import (
	"math"
	"time"
)

// ForecastHorizonYears bounds every date forecast from a usage rate: a date
// further out is reported as beyond the horizon, with no date. Further out
// means nothing to a maintenance plan, and the arithmetic would not hold: a
// time.Duration spans about 292 years, and a longer one wraps around (a
// forecast once came out as a date in the 1700s and sorted first).
const ForecastHorizonYears = 50

// ForecastHorizonDays is the horizon in days (mean Gregorian year of
// 365.2425 days).
const ForecastHorizonDays = ForecastHorizonYears * 365.2425

// Why a forecast has no date (stable codes, the forecast_reason members).
const (
	// ForecastBeyondHorizon: at the current rate the limit is reached more
	// than ForecastHorizonYears out.
	ForecastBeyondHorizon = "beyond_horizon"
	// ForecastNoUse: no use over the trailing window, so no rate.
	ForecastNoUse = "no_recent_use"
)

// ForecastIn returns the moment days after now, saturating: days at or
// below zero give now; more than the horizon, or not a number, give no date
// and ForecastBeyondHorizon.
func ForecastIn(now time.Time, days float64) (*time.Time, string) {
	if !(days <= ForecastHorizonDays) { // NaN and +Inf too
		return nil, ForecastBeyondHorizon
	}
	t := now.Add(time.Duration(math.Max(0, days) * float64(24*time.Hour)))
	return &t, ""
}

// ForecastAt returns when remaining is used up at perDay a day from now:
// now when nothing remains; no date and ForecastNoUse when there is no rate
// (zero, negative or not a number); no date and ForecastBeyondHorizon past
// the horizon.
func ForecastAt(now time.Time, remaining, perDay float64) (*time.Time, string) {
	if remaining <= 0 {
		return &now, ""
	}
	if !(perDay > 0) {
		return nil, ForecastNoUse
	}
	return ForecastIn(now, remaining/perDay)
}
