package health

import (
	"context"
	"encoding/json"
	"fmt"
	"slices"
	"sort"
	"time"

	gojson "github.com/goccy/go-json"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/wear"
)

// MotorView is a motor's bearing health.
type MotorView struct {
	Mode                   string          `json:"mode"` // absolute (bearing rating known) or relative (rated interval)
	ConsumedFraction       float64         `json:"consumed_fraction"`
	RunHours               float64         `json:"run_hours"`
	Flights                int             `json:"flights"`
	RemainingEquivHours    *float64        `json:"remaining_equiv_hours"` // run hours left at recent duty
	UtilisationHoursPerDay float64         `json:"utilisation_hours_per_day"`
	ForecastDate           *time.Time      `json:"forecast_date"`
	ForecastReason         *string         `json:"forecast_reason"` // why forecast_date is null: beyond_horizon, no_recent_use
	Since                  *time.Time      `json:"since"`           // counting from (first fit)
	Model                  BearingSettings `json:"model"`
	Series                 []SeriesPoint   `json:"series"` // cumulative consumed fraction per flight
	// Spectrum is the motor's load spectrum over every logged run while
	// fitted: turning time and revolutions per rpm bin.
	Spectrum []SpectrumBin `json:"spectrum"`
}

// SpectrumBin is one rpm bin [RPMLo, RPMHi) of a load spectrum.
type SpectrumBin struct {
	RPMLo       float64 `json:"rpm_lo"`
	RPMHi       float64 `json:"rpm_hi"`
	Seconds     float64 `json:"seconds"`
	Revolutions float64 `json:"revolutions"`
}

// BearingSettings are the bearing model settings used.
type BearingSettings struct {
	Type           string   `json:"type"` // ball or roller (ISO 281 life exponent 3 or 10/3)
	DynamicRatingN *float64 `json:"dynamic_rating_n"`
	StaticRatingN  *float64 `json:"static_rating_n"`
	Count          int      `json:"count"`
	LifeFactor     float64  `json:"life_factor"`
	BalanceGrade   float64  `json:"balance_grade_mm_s"`
	RotorMassKg    float64  `json:"rotor_mass_kg"`
	RatedHours     *float64 `json:"rated_hours"`
	ReferenceRPM   *float64 `json:"reference_rpm"`
	ReferenceN     *float64 `json:"reference_thrust_n"`
}

// SeriesPoint is one value of a plotted series.
type SeriesPoint struct {
	At    time.Time `json:"at"`
	Value float64   `json:"value"`
}

type rpmBin struct {
	RPMLo       float64  `json:"rpm_lo"`
	RPMHi       float64  `json:"rpm_hi"`
	Seconds     float64  `json:"seconds"`
	Revolutions float64  `json:"revolutions"`
	MeanThrustN *float64 `json:"mean_thrust_n"`
}

func (s *Service) motor(ctx context.Context, p *fleet.Part, now time.Time, v *View) error {
	since, err := s.DB.FirstFitted(ctx, p.ID)
	if err != nil {
		return err
	}
	runs, err := s.DB.RotorRuns(ctx, p.ID, since)
	if err != nil {
		return err
	}
	return s.motorFrom(ctx, p, since, runs, now, v)
}

// motorFrom computes a motor's view from its first fit and its runs since.
func (s *Service) motorFrom(ctx context.Context, p *fleet.Part, since time.Time, runs []store.RotorRun, now time.Time, v *View) error {
	var specs fleet.MotorSpecs
	if err := json.Unmarshal(p.Specs, &specs); err != nil {
		return err
	}
	var err error
	m := wear.BearingModel{BalanceGrade_mm_s: s.Settings.BalanceGrade, RotorMassKg: s.Settings.RotorMassKg}
	set := BearingSettings{Type: string(wear.Ball), BalanceGrade: m.BalanceGrade_mm_s, RotorMassKg: m.RotorMassKg, LifeFactor: 1, Count: 2}
	if b := specs.Bearing; b != nil {
		m.Count, set.Count = b.Count, b.Count
		if b.Type != "" {
			m.Type, set.Type = wear.BearingType(b.Type), b.Type
		}
		if b.DynamicRatingN != nil {
			m.C_N, set.DynamicRatingN = *b.DynamicRatingN, b.DynamicRatingN
		}
		if b.StaticRatingN != nil {
			m.C0_N, set.StaticRatingN = *b.StaticRatingN, b.StaticRatingN
		}
		if b.LifeFactor != nil {
			m.AISO, set.LifeFactor = *b.LifeFactor, *b.LifeFactor
		}
	}
	// Sized up front: a motor's history is hundreds of runs, and growing
	// these slices run by run was a good part of the refresh's allocation.
	flights := make([]wear.MotorFlight, 0, len(runs))
	rpms, thrusts := make([]float64, 0, len(runs)), make([]float64, 0, len(runs))
	skipped := 0
	var spectrum []SpectrumBin // a few rpm bins, found by a scan (a map cost more)
	// One run's bins at a time in scratch; the flights' load spectra cut
	// from shared blocks (a few runs' worth each), not one allocation a run.
	var scratch []rpmBin
	var block []wear.SpectrumBin
	for _, r := range runs {
		bins, err := runBins(r, scratch)
		if err != nil {
			return err
		}
		scratch = bins
		for _, b := range bins {
			i := slices.IndexFunc(spectrum, func(x SpectrumBin) bool { return x.RPMLo == b.RPMLo && x.RPMHi == b.RPMHi })
			if i < 0 {
				i, spectrum = len(spectrum), append(spectrum, SpectrumBin{RPMLo: b.RPMLo, RPMHi: b.RPMHi})
			}
			spectrum[i].Seconds += b.Seconds
			spectrum[i].Revolutions += b.Revolutions
		}
		if slices.ContainsFunc(bins, func(b rpmBin) bool { return b.MeanThrustN == nil }) {
			skipped++ // thrust needs the take-off mass; without it the load is unknown
			continue
		}
		if cap(block)-len(block) < len(bins) {
			block = make([]wear.SpectrumBin, 0, max(len(bins), 64*len(bins)))
		}
		n := len(block)
		block = block[:n+len(bins)]
		mf := wear.MotorFlight{At: r.TakeoffAt, Bins: block[n : n+len(bins) : n+len(bins)]}
		for i, b := range bins {
			mf.Bins[i] = wear.SpectrumBin{RPM: (b.RPMLo + b.RPMHi) / 2, Seconds: b.Seconds,
				Revolutions: b.Revolutions, ThrustN: *b.MeanThrustN}
		}
		flights = append(flights, mf)
		if r.MeanRPM != nil && r.ThrustMeanN != nil {
			rpms, thrusts = append(rpms, *r.MeanRPM), append(thrusts, *r.ThrustMeanN)
		}
	}
	if skipped > 0 {
		v.Notes = append(v.Notes, "flights without a known take-off mass have no thrust figures and are not counted in bearing wear")
	}
	if m.C_N == 0 {
		// Relative mode: the interval holds at the model's typical duty, the
		// median over every motor of this part number (else this motor's own),
		// so a motor worked harder than its kind uses its life faster.
		refRPM, refN, ok := 0.0, 0.0, false
		if p.PartNumber != "" {
			if refRPM, refN, ok, err = s.modelDuty(ctx, p.PartNumber); err != nil {
				return err
			}
		}
		if !ok && len(rpms) > 0 {
			refRPM, refN, ok = median(rpms), median(thrusts), true
		}
		if !ok {
			v.Status = "unknown"
			v.Notes = append(v.Notes, "no logged flights with rotor speed and thrust yet: bearing wear cannot be estimated")
			v.Motor = &MotorView{Mode: m.Mode(), Model: set, Series: []SeriesPoint{}, Spectrum: spectrumOf(spectrum)}
			return nil
		}
		m.Rated = wear.RatedInterval{Hours: s.Settings.RatedBearingHours, RPM: refRPM, ThrustN: refN}
		set.RatedHours, set.ReferenceRPM, set.ReferenceN = ptr(m.Rated.Hours), ptr(m.Rated.RPM), ptr(m.Rated.ThrustN)
		v.Notes = append(v.Notes, "relative mode: no bearing rating in the motor's specs; the interval is a placeholder setting, replace it with the maker's figure")
	}
	st, err := m.Status(flights, now, s.Settings.UtilisationWindow)
	if err != nil {
		return err
	}
	mv := &MotorView{Mode: st.Mode, ConsumedFraction: st.ConsumedFraction, RunHours: st.RunHours, Flights: len(flights),
		UtilisationHoursPerDay: st.UtilisationHoursPerDay, ForecastDate: st.ForecastDate, Model: set,
		Series: make([]SeriesPoint, len(st.Series)), Spectrum: spectrumOf(spectrum)}
	if !since.IsZero() {
		mv.Since = &since
	}
	if st.RateKnown {
		mv.RemainingEquivHours = ptr(st.RemainingEquivHours)
	}
	if st.ForecastReason != "" {
		mv.ForecastReason = &st.ForecastReason
	}
	for i, pt := range st.Series {
		mv.Series[i] = SeriesPoint{At: pt.At, Value: pt.Consumed}
	}
	v.Motor = mv
	switch {
	case st.ConsumedFraction >= 1:
		v.Status = "replace"
	case st.ConsumedFraction >= 0.9:
		v.Status = "watch"
	default:
		v.Status = "serviceable"
	}
	return nil
}

// relativeMode reports whether motorFrom will weigh the motor against its
// model's duty: no dynamic rating in its specs (specs that do not decode
// say no here; motorFrom reports them).
func relativeMode(p *fleet.Part) bool {
	var specs fleet.MotorSpecs
	if err := json.Unmarshal(p.Specs, &specs); err != nil {
		return false
	}
	return specs.Bearing == nil || specs.Bearing.DynamicRatingN == nil || *specs.Bearing.DynamicRatingN == 0
}

// runBins returns a run's rpm bins: from BinsArray when it was read (the
// batch), into scratch's memory, else decoded from the JSON. goccy/go-json decodes these about ten
// times faster than encoding/json, to the same values
// (TestBinsDecodeAsStdlib); TestRecomputeMatchesOneByOne holds the array
// path to the JSON one.
func runBins(r store.RotorRun, scratch []rpmBin) ([]rpmBin, error) {
	if r.BinsArray == nil {
		var bins []rpmBin
		return bins, gojson.Unmarshal(r.Bins, &bins)
	}
	a := r.BinsArray
	if len(a)%5 != 0 {
		return nil, fmt.Errorf("flight %s: %d values in the bins array, not five a bin", r.FlightID, len(a))
	}
	bins := slices.Grow(scratch[:0], len(a)/5)[:len(a)/5]
	for i := range bins {
		v := a[5*i : 5*i+5]
		for _, x := range v[:4] {
			if x == nil {
				return nil, fmt.Errorf("flight %s: a null in the bins array", r.FlightID)
			}
		}
		bins[i] = rpmBin{RPMLo: *v[0], RPMHi: *v[1], Seconds: *v[2], Revolutions: *v[3], MeanThrustN: v[4]}
	}
	return bins, nil
}

// spectrumOf lists the summed bins in rpm order.
func spectrumOf(bins []SpectrumBin) []SpectrumBin {
	out := append(make([]SpectrumBin, 0, len(bins)), bins...)
	sort.Slice(out, func(i, j int) bool { return out[i].RPMLo < out[j].RPMLo })
	return out
}

func median(x []float64) float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}
