package wear

import (
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// PropRun is one flight's use of a propeller.
type PropRun struct {
	At          time.Time
	Seconds     float64 // motor run time
	Revolutions float64
}

// PropLimits are optional life limits of a propeller; zero means none.
type PropLimits struct {
	Hours       float64
	Revolutions float64
}

// PropStatus is a propeller's use since it was fitted.
type PropStatus struct {
	Hours       float64
	Revolutions float64
	Strikes     int
	ReplaceNow  bool
	Reasons     []Reason
}

// PropellerStatus sums the runs and strikes at or after fittedAt and up to
// now (earlier ones belong to the propeller it replaced). Any strike makes
// replacement due at once, visible damage or not (common practice).
func PropellerStatus(fittedAt time.Time, runs []PropRun, strikes []time.Time, limits PropLimits, now time.Time) (PropStatus, error) {
	var s PropStatus
	for i, r := range runs {
		if r.Seconds < 0 || r.Revolutions < 0 || !finite(r.Seconds+r.Revolutions) {
			return PropStatus{}, fleet.Errorf(fleet.EINVALID, "run %d: values must be finite and non-negative", i)
		}
		if r.At.Before(fittedAt) || r.At.After(now) {
			continue
		}
		s.Hours += r.Seconds / 3600
		s.Revolutions += r.Revolutions
	}
	for _, t := range strikes {
		if !t.Before(fittedAt) && !t.After(now) {
			s.Strikes++
		}
	}
	if s.Strikes > 0 {
		s.Reasons = append(s.Reasons, Reason{Code: "prop_strike", Level: StatusRetire,
			Message: "propeller struck something: replace before the next flight"})
	}
	if limits.Hours > 0 && s.Hours >= limits.Hours {
		s.Reasons = append(s.Reasons, Reason{Code: "prop_hours", Level: StatusRetire,
			Message: "propeller has reached its hours limit"})
	}
	if limits.Revolutions > 0 && s.Revolutions >= limits.Revolutions {
		s.Reasons = append(s.Reasons, Reason{Code: "prop_revolutions", Level: StatusRetire,
			Message: "propeller has reached its revolutions limit"})
	}
	s.ReplaceNow = len(s.Reasons) > 0
	return s, nil
}
