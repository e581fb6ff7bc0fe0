package health

import (
	"context"
	"math"
	"time"

	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/wear"
)

// TrendsView is an airframe's efficiency and vibration trends over its
// recent logged flights.
type TrendsView struct {
	AirframeID      string     `json:"airframe_id"`
	ComputedAt      time.Time  `json:"computed_at"`
	Flights         int        `json:"flights"`
	LimitPct        float64    `json:"limit_pct"`
	EfficiencyIndex *TrendView `json:"efficiency_index"`
	Vibration       *TrendView `json:"vibration_rms"`
	// VibrationBandHz is the band of the flights the vibration trend is
	// over: the latest flight's, and those measured over the same band
	// (SameBand); VibrationOtherBand counts the flights with a vibration
	// figure left out for another band (logged at another rate).
	VibrationBandHz    *[2]float64        `json:"vibration_band_hz"`
	VibrationOtherBand int                `json:"vibration_other_band"`
	Flagged            bool               `json:"flagged"`
	Series             []store.TrendPoint `json:"series"`
}

// TrendView is one robust (Theil-Sen) trend.
type TrendView struct {
	N              int     `json:"n"`
	Slope          float64 `json:"slope_per_flight"`
	Intercept      float64 `json:"intercept"` // the line's value at the window's first flight
	BaselineMedian float64 `json:"baseline_median"`
	RisePct        float64 `json:"rise_pct"`
	Flag           bool    `json:"flag"`
}

// Airframe computes and stores an airframe's trends.
func (s *Service) Airframe(ctx context.Context, airframeID string) (*TrendsView, error) {
	now := s.Now().UTC()
	tv, err := s.trends(ctx, airframeID, now, nil)
	if err != nil {
		return nil, err
	}
	return tv, s.saveViews(ctx, []store.HealthRow{{ID: airframeID, Flagged: tv.Flagged, View: tv}}, now, true)
}

// AirframeAt computes an airframe's trends over its logged flights before
// the moment at, without storing them (readiness as of a past moment).
func (s *Service) AirframeAt(ctx context.Context, airframeID string, at time.Time) (*TrendsView, error) {
	return s.trends(ctx, airframeID, at, &at)
}

func (s *Service) trends(ctx context.Context, airframeID string, now time.Time, before *time.Time) (*TrendsView, error) {
	pts, err := s.DB.AirframeTrendPoints(ctx, airframeID, s.Settings.TrendFlights, before)
	if err != nil {
		return nil, err
	}
	return s.trendsFrom(airframeID, pts, now), nil
}

// trendsFrom computes an airframe's trends from its last logged flights.
func (s *Service) trendsFrom(airframeID string, pts []store.TrendPoint, now time.Time) *TrendsView {
	tv := &TrendsView{AirframeID: airframeID, ComputedAt: now, Flights: len(pts), LimitPct: s.Settings.TrendLimitPct,
		Series: pts}
	if tv.Series == nil {
		tv.Series = []store.TrendPoint{}
	}
	var eff, vib []float64
	for _, p := range pts {
		if p.EfficiencyIndex != nil {
			eff = append(eff, *p.EfficiencyIndex)
		}
	}
	// Vibration RMS over another band is another measure (a slower log's
	// band reaches down to manoeuvres and stops lower), so the trend takes
	// the flights measured over the latest flight's band only.
	for i := len(pts) - 1; i >= 0; i-- {
		if pts[i].VibrationRMS != nil {
			tv.VibrationBandHz = pts[i].VibrationBandHz
			break
		}
	}
	for _, p := range pts {
		if p.VibrationRMS == nil {
			continue
		}
		if !SameBand(p.VibrationBandHz, tv.VibrationBandHz) {
			tv.VibrationOtherBand++
			continue
		}
		vib = append(vib, *p.VibrationRMS)
	}
	tv.EfficiencyIndex = s.trend(eff)
	tv.Vibration = s.trend(vib)
	tv.Flagged = (tv.EfficiencyIndex != nil && tv.EfficiencyIndex.Flag) || (tv.Vibration != nil && tv.Vibration.Flag)
	return tv
}

// bandTolerance is how far (relative) two flights' band edges may differ and
// the bands still count as one: a log's mean sample rate wanders a little
// around its set rate, while a change of set rate is a step of a factor
// (common practice: loggers offer rates such as 10, 25, 50 Hz).
const bandTolerance = 0.1

// SameBand reports whether two vibration bands (nil: unknown) are one
// (both known and their edges within bandTolerance, or both unknown).
func SameBand(a, b *[2]float64) bool {
	if a == nil || b == nil {
		return a == b
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > bandTolerance*math.Max(math.Abs(a[i]), math.Abs(b[i])) {
			return false
		}
	}
	return true
}

// minTrendFlights is the fewest flights a trend is fitted to (a robust slope
// over fewer says little).
const minTrendFlights = 5

func (s *Service) trend(values []float64) *TrendView {
	if len(values) < minTrendFlights {
		return nil
	}
	r, err := wear.Trend(values, 0, s.Settings.TrendLimitPct)
	if err != nil {
		return nil
	}
	return &TrendView{N: r.N, Slope: r.Slope, Intercept: r.Intercept, BaselineMedian: r.BaselineMedian, RisePct: r.RisePct, Flag: r.Flag}
}
