package wear

import (
	"testing"
	"time"
)

func TestPropellerStatus(t *testing.T) {
	now := time.Date(2026, 4, 1, 12, 0, 0, 0, time.UTC)
	fitted := now.AddDate(0, 0, -10)
	runs := []PropRun{
		{At: fitted.AddDate(0, 0, -1), Seconds: 3600, Revolutions: 1e5}, // previous propeller's
		{At: fitted.Add(time.Hour), Seconds: 1800, Revolutions: 2e5},
		{At: fitted.AddDate(0, 0, 2), Seconds: 3600, Revolutions: 4e5},
	}
	// Hours and revolutions since fitted (computed): 0.5 + 1 h, 6e5 rev.
	s, err := PropellerStatus(fitted, runs, nil, PropLimits{}, now)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "hours", s.Hours, 1.5, 1e-12)
	near(t, "revolutions", s.Revolutions, 6e5, 0)
	if s.ReplaceNow {
		t.Errorf("no strike, no limit: %+v", s)
	}
	// A strike before this propeller was fitted is not its strike.
	s, _ = PropellerStatus(fitted, runs, []time.Time{fitted.Add(-time.Minute)}, PropLimits{}, now)
	if s.ReplaceNow || s.Strikes != 0 {
		t.Errorf("old strike counted: %+v", s)
	}
	// Any strike since fitting: replace at once (common practice,
	// REFERENCES.md section 7), however young the propeller.
	s, _ = PropellerStatus(fitted, runs, []time.Time{fitted.AddDate(0, 0, 3)}, PropLimits{Hours: 100}, now)
	if !s.ReplaceNow || s.Strikes != 1 || len(s.Reasons) != 1 || s.Reasons[0].Code != "prop_strike" {
		t.Errorf("strike: %+v", s)
	}
	// Limits, when set, make it due too.
	s, _ = PropellerStatus(fitted, runs, nil, PropLimits{Hours: 1.5}, now)
	if !s.ReplaceNow || s.Reasons[0].Code != "prop_hours" {
		t.Errorf("hours limit: %+v", s)
	}
	s, _ = PropellerStatus(fitted, runs, nil, PropLimits{Revolutions: 7e5}, now)
	if s.ReplaceNow {
		t.Errorf("under revolutions limit: %+v", s)
	}
}
