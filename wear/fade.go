package wear

import (
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// DefaultEOLFraction is the usual end-of-life threshold, 80 % of rated
// capacity (cell datasheets; IEEE 1188 uses 80 % for stationary batteries).
const DefaultEOLFraction = 0.80

// TrendPoint is one measurement (capacity, or resistance rise) at an
// equivalent-full-cycle count.
type TrendPoint struct {
	Cycle float64
	Value float64
}

// CapacityForecast forecasts where capacity falls to fraction (0 means
// DefaultEOLFraction) of rated, in the unit of the points, at the default
// level and horizon.
func CapacityForecast(points []TrendPoint, rated, fraction float64) (*TrendForecast, error) {
	if !(rated > 0) || !finite(rated) {
		return nil, fleet.FieldError("rated", "rated capacity must be positive")
	}
	if fraction == 0 {
		fraction = DefaultEOLFraction
	}
	if !(fraction > 0 && fraction < 1) {
		return nil, fleet.FieldError("end_of_life", "end-of-life fraction must lie in (0, 1)")
	}
	return Forecast(points, ForecastSettings{Threshold: fraction * rated})
}

// ObservedCrossing returns the first measured cycle below threshold and the
// sustained crossing: the first measurement below after the last one at or
// above it (nil when the latest measurement is still at or above).
func ObservedCrossing(points []TrendPoint, threshold float64) (first, sustained *float64) {
	pts := sortedPoints(points)
	return crossings(pts, threshold, false)
}

// CycleDate converts a forecast cycle to a date at a usage rate of
// cyclesPerDay (e.g. equivalent full cycles per day over a trailing window):
// now when the cycle is already reached; else no date and the reason when
// there is no usage or the date is beyond the forecast horizon
// (fleet.ForecastAt).
func CycleDate(now time.Time, currentCycles, targetCycle, cyclesPerDay float64) (*time.Time, string) {
	return fleet.ForecastAt(now, targetCycle-currentCycles, cyclesPerDay)
}

func ptr(v float64) *float64 { return &v }
