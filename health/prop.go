package health

import (
	"context"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/wear"
)

// PropView is a propeller's life since it was fitted.
type PropView struct {
	FittedAt    *time.Time    `json:"fitted_at"`
	AirframeID  *string       `json:"airframe_id"`
	Position    *string       `json:"position"`
	Hours       float64       `json:"hours"`
	Revolutions float64       `json:"revolutions"`
	Strikes     int           `json:"strikes"`
	ReplaceNow  bool          `json:"replace_now"`
	Reasons     []wear.Reason `json:"reasons"`
	Series      []SeriesPoint `json:"series"` // cumulative revolutions per flight
}

func (s *Service) propeller(ctx context.Context, p *fleet.Part, now time.Time, v *View) error {
	fit, err := s.DB.CurrentFit(ctx, p.ID)
	if fleet.ErrorCode(err) == fleet.ENOTFOUND {
		return s.propellerFrom(nil, nil, nil, now, v)
	} else if err != nil {
		return err
	}
	runs, err := s.DB.RotorRuns(ctx, p.ID, fit.FittedAt)
	if err != nil {
		return err
	}
	// A strike is recorded against the propeller, or against the airframe
	// naming no part (then it concerns every propeller fitted).
	var strikes []time.Time
	for _, f := range []store.EventFilter{{PartID: p.ID, Kind: "prop_strike"}, {AirframeID: fit.AirframeID, Kind: "prop_strike"}} {
		evs, _, err := s.DB.Events(ctx, f, store.Page{Limit: store.MaxPageSize})
		if err != nil {
			return err
		}
		for _, e := range evs {
			if f.AirframeID != "" && e.PartID != nil {
				continue // names a part: counted above if it is this one
			}
			strikes = append(strikes, e.At)
		}
	}
	return s.propellerFrom(fit, runs, strikes, now, v)
}

// propellerFrom computes a propeller's view from its open fit (nil: not
// fitted), its runs since fitted and the strikes that concern it.
func (s *Service) propellerFrom(fit *fleet.Fit, runs []store.RotorRun, strikes []time.Time, now time.Time, v *View) error {
	pv := &PropView{Reasons: []wear.Reason{}, Series: []SeriesPoint{}}
	v.Propeller = pv
	if fit == nil {
		v.Status = "not_fitted"
		return nil
	}
	pv.FittedAt, pv.AirframeID, pv.Position = &fit.FittedAt, &fit.AirframeID, &fit.Position
	var pr []wear.PropRun
	total := 0.0
	for _, r := range runs {
		pr = append(pr, wear.PropRun{At: r.TakeoffAt, Seconds: r.RunS, Revolutions: r.Revolutions})
		total += r.Revolutions
		pv.Series = append(pv.Series, SeriesPoint{At: r.TakeoffAt, Value: total})
	}
	st, err := wear.PropellerStatus(fit.FittedAt, pr, strikes, wear.PropLimits{}, now)
	if err != nil {
		return err
	}
	pv.Hours, pv.Revolutions, pv.Strikes, pv.ReplaceNow = st.Hours, st.Revolutions, st.Strikes, st.ReplaceNow
	if st.Reasons != nil {
		pv.Reasons = st.Reasons
	}
	v.Status = "serviceable"
	if st.ReplaceNow {
		v.Status = "replace"
	}
	return nil
}
