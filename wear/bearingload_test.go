package wear

import (
	"math"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

func TestUnbalanceForce(t *testing.T) {
	// F = m e w^2 with G = e w (ISO 21940-11), so F = m G w (computed):
	// 0.05 kg, G 6.3 mm/s, 6000 r/min -> w = 628.3185 rad/s,
	// F = 0.05 * 0.0063 * 628.3185 = 0.197920 N.
	near(t, "F", UnbalanceForce(0.05, 6.3, 6000), 0.05*0.0063*(2*math.Pi*100), 1e-12)
	near(t, "F", UnbalanceForce(0.05, 6.3, 6000), 0.197920, 1e-6)
	// The load model splits it over the bearings and puts thrust axial.
	m := BearingModel{C_N: 1000, C0_N: 500, RotorMassKg: 0.05, Count: 2}
	fr, fa, _, err := m.Load(6000, 5)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "Fr per bearing", fr, 0.197920/2, 1e-6)
	near(t, "Fa", fa, 5, 0)
}

func TestDamageMatchesDutyCycleExample(t *testing.T) {
	// One hour of the REFERENCES.md duty-cycle example as a spectrum. With no
	// unbalance mass and Fa/C0 >= 0.56, Shigley Table 11-1 gives Y = 1.00, so
	// P = thrust and the damage per hour must be 1 / 8146.97 h (computed).
	m := BearingModel{C_N: 2000, C0_N: 100}
	var bins []SpectrumBin
	for _, s := range refDuty {
		sec := 3600 * s.TimeShare
		bins = append(bins, SpectrumBin{RPM: s.RPM, Seconds: sec, Revolutions: s.RPM / 60 * sec, ThrustN: s.LoadN})
	}
	d, err := m.Damage(bins)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "hours to D = 1", 1/d, 8146.97, 0.005)
	// a1 = 0.25 at 99 % (ISO 281:2007) quadruples the damage; a_ISO 2 halves it.
	m.Reliability, m.AISO = 99, 2
	d2, _ := m.Damage(bins)
	relNear(t, "a1 a_ISO scaling", d2, d*2, 1e-12)
	// A roller bearing: the same spectrum by Palmgren-Miner with p = 10/3
	// (ISO 281), as the duty-cycle route computes it.
	roller := BearingModel{Type: Roller, C_N: 2000, C0_N: 100}
	dr, err := roller.Damage(bins)
	if err != nil {
		t.Fatal(err)
	}
	want, _ := MinerLifeHours(Roller, 2000, refDuty)
	relNear(t, "roller hours to D = 1", 1/dr, want, 1e-12)
	// And in relative mode the load ratio goes to the 10/3 power:
	// (P_hard/P_gentle)^(10/3) with the hand values of TestLoadLifeRatio.
	rel := BearingModel{Type: Roller, C0_N: 1000, Rated: RatedInterval{Hours: 300, RPM: 6000, ThrustN: 28}}
	dg, _ := rel.Damage([]SpectrumBin{{RPM: 6000, Seconds: 600, Revolutions: 60000, ThrustN: 28}})
	dh, _ := rel.Damage([]SpectrumBin{{RPM: 9000, Seconds: 400, Revolutions: 60000, ThrustN: 56}})
	relNear(t, "relative roller hard/gentle", dh/dg, math.Pow(95.76/55.72, 10.0/3), 1e-12)
	if err := (BearingModel{Type: "needle", C_N: 2000}).Validate(); err == nil {
		t.Error("unknown bearing type accepted")
	}
}

func TestLoadLifeRatio(t *testing.T) {
	// ISO 281: life goes as P^-3, so at equal revolutions a motor on hard duty
	// ages faster than one on gentle duty by (P_hard/P_gentle)^3. Hand values
	// from Shigley Table 11-1 rows: C0 = 1000 N, no unbalance, pure thrust:
	// gentle 28 N (Fa/C0 = 0.028, Y = 1.99) -> P = 55.72 N; hard 56 N
	// (Fa/C0 = 0.056, Y = 1.71) -> P = 95.76 N; ratio^3 = 5.0757.
	want := math.Pow(95.76/55.72, 3)
	gentle := []SpectrumBin{{RPM: 6000, Seconds: 600, Revolutions: 60000, ThrustN: 28}}
	hard := []SpectrumBin{{RPM: 9000, Seconds: 400, Revolutions: 60000, ThrustN: 56}}
	for _, m := range []BearingModel{
		{C_N: 2000, C0_N: 1000},
		{C0_N: 1000, Rated: RatedInterval{Hours: 300, RPM: 6000, ThrustN: 28}},
	} {
		dg, err := m.Damage(gentle)
		if err != nil {
			t.Fatal(err)
		}
		dh, _ := m.Damage(hard)
		relNear(t, m.Mode()+" hard/gentle", dh/dg, want, 1e-12)
	}
}

func TestRelativeModeReferenceDuty(t *testing.T) {
	// Definition of relative mode: 10 h at the reference duty consumes
	// 10 / interval, whatever the load model's details.
	m := BearingModel{RotorMassKg: 0.04, Rated: RatedInterval{Hours: 200, RPM: 6000, ThrustN: 5}}
	bins := []SpectrumBin{{RPM: 6000, Seconds: 36000, Revolutions: 6000 * 600, ThrustN: 5}}
	d, err := m.Damage(bins)
	if err != nil {
		t.Fatal(err)
	}
	relNear(t, "10 h at reference", d, 10.0/200, 1e-12)
	if m.Mode() != "relative" {
		t.Errorf("mode = %s", m.Mode())
	}
	if _, err := (BearingModel{}).Damage(bins); fleet.ErrorCode(err) != fleet.EINVALID {
		t.Errorf("no C and no interval: got %v, want invalid", err)
	}
	if _, err := (BearingModel{C_N: 100, Reliability: 93}).Damage(bins); fleet.ErrorCode(err) != fleet.EINVALID {
		t.Errorf("reliability 93: got %v, want invalid", err)
	}
}

func TestBearingStatus(t *testing.T) {
	// Relative mode with unknown C0 and no unbalance: P = Y thrust with Y
	// fixed, so a thrust ratio of 2^(1/3) doubles the damage rate (ISO 281
	// exponent 3). Hand figures: one old hour at reference = 0.01; ten recent
	// half hours at double rate = 10 * 0.5 * 0.02 = 0.1; consumed 0.11;
	// remaining 0.89 / 0.02 = 44.5 h; utilisation 5 h / 30 days; so the
	// forecast is 44.5 * 6 = 267 days ahead.
	m := BearingModel{Rated: RatedInterval{Hours: 100, RPM: 6000, ThrustN: 5}}
	now := time.Date(2026, 6, 1, 12, 0, 0, 0, time.UTC)
	flights := []MotorFlight{{At: now.AddDate(0, 0, -60), Bins: []SpectrumBin{{6000, 3600, 360000, 5}}}}
	for i := range 10 {
		flights = append(flights, MotorFlight{At: now.AddDate(0, 0, -i-1), Bins: []SpectrumBin{{6000, 1800, 180000, 5 * math.Cbrt(2)}}})
	}
	st, err := m.Status(flights, now, 0)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "consumed", st.ConsumedFraction, 0.11, 1e-12)
	near(t, "rate", st.RecentDamagePerHour, 0.02, 1e-12)
	near(t, "remaining h", st.RemainingEquivHours, 44.5, 1e-9)
	near(t, "h/day", st.UtilisationHoursPerDay, 5.0/30, 1e-12)
	if st.ForecastDate == nil || st.ForecastDate.Sub(now.AddDate(0, 0, 267)).Abs() > time.Second {
		t.Errorf("forecast = %v, want %v", st.ForecastDate, now.AddDate(0, 0, 267))
	}
	if len(st.Series) != 11 || st.Series[0].At != flights[0].At || st.Series[10].Consumed != st.ConsumedFraction {
		t.Errorf("series = %+v", st.Series)
	}
	for i := 1; i < len(st.Series); i++ {
		if st.Series[i].Consumed < st.Series[i-1].Consumed || st.Series[i].At.Before(st.Series[i-1].At) {
			t.Fatalf("series not cumulative in time order at %d", i)
		}
	}

	// No flights in the window: rate from all history, no forecast date.
	st, _ = m.Status(flights[:1], now, 0)
	if !st.RateKnown || st.ForecastDate != nil {
		t.Errorf("idle motor: %+v", st)
	}
	near(t, "idle remaining", st.RemainingEquivHours, 99, 1e-9)
	// Used up (a 1 h interval run 1.1 h): due now, even when idle lately.
	worn := BearingModel{Rated: RatedInterval{Hours: 1, RPM: 6000, ThrustN: 5}}
	st, _ = worn.Status([]MotorFlight{{At: now.AddDate(0, 0, -90), Bins: []SpectrumBin{{6000, 3960, 396000, 5}}}}, now, 0)
	if st.ConsumedFraction < 1 || st.RemainingEquivHours != 0 || st.ForecastDate == nil || !st.ForecastDate.Equal(now) {
		t.Errorf("worn motor: %+v", st)
	}
	// Absolute mode: the status sums the per-flight damage.
	absolute := BearingModel{C_N: 600, C0_N: 300, RotorMassKg: 0.03}
	d1, _ := absolute.Damage(flights[0].Bins)
	d2, _ := absolute.Damage(flights[1].Bins)
	st, err = absolute.Status(flights[:2], now, 0)
	if err != nil || st.Mode != "absolute" {
		t.Fatal(err, st.Mode)
	}
	relNear(t, "absolute consumed", st.ConsumedFraction, d1+d2, 1e-12)
	// No flights at all.
	st, _ = m.Status(nil, now, 0)
	if st.RateKnown || st.ForecastDate != nil || st.ConsumedFraction != 0 {
		t.Errorf("new motor: %+v", st)
	}
}

// Bearing forecasts from extreme rates saturate. In relative mode one hour
// at the reference duty uses 1/RatedHours of the life (the interval's
// definition), so one such hour in the 30-day window makes the rate
// 1/(30 RatedHours) a day. At 1e-12 a day the rest of the life is 1e12 days
// away: beyond the 50-year horizon, no date. At 1e12 a day the life is used
// up: due now. With the only flight before the window there is no rate.
func TestBearingForecastRates(t *testing.T) {
	now := time.Date(2026, 6, 1, 12, 0, 0, 0, time.UTC)
	hour := []SpectrumBin{{6000, 3600, 360000, 5}}
	for _, c := range []struct {
		name     string
		rate     float64
		daysAgo  int
		date     bool
		why      string
		consumed bool
	}{
		{"no use in the window", 1e-3, 45, false, fleet.ForecastNoUse, false},
		{"1e-12 a day", 1e-12, 3, false, fleet.ForecastBeyondHorizon, false},
		{"1e12 a day", 1e12, 3, true, "", true},
	} {
		m := BearingModel{Rated: RatedInterval{Hours: 1 / (30 * c.rate), RPM: 6000, ThrustN: 5}}
		st, err := m.Status([]MotorFlight{{At: now.AddDate(0, 0, -c.daysAgo), Bins: hour}}, now, 0)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if (st.ForecastDate != nil) != c.date || st.ForecastReason != c.why || (st.ConsumedFraction >= 1) != c.consumed ||
			(st.ForecastDate != nil && !st.ForecastDate.Equal(now)) {
			t.Errorf("%s: forecast %v (%q), consumed %g", c.name, st.ForecastDate, st.ForecastReason, st.ConsumedFraction)
		}
	}
}
