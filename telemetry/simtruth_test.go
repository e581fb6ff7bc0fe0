package telemetry_test

// These tests run the analysis on logs from the project's simulator and
// compare with its truth. Throughout, "truth" is sim.Truth from internal/sim:
// computed from the noise-free signal by trapezoidal integration on a grid of
// at most 50 ms split at every profile breakpoint, or a constant of its model
// (k, pack resistance, the planted landing load); the logs carry the
// simulator's DefaultNoise and DefaultSampling (20 % jitter, dropouts up to
// 0.5 s). Tolerances named tol*Rel, tolLandingG are the project's acceptance
// criteria; tolPeakA, tolMinPackV, tolMinCellV are this test's choice (six
// noise standard deviations), see simtruth_helpers_test.go.

import (
	"fmt"
	"math"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/telemetry"
)

const (
	accept   = "acceptance criteria"
	noiseTol = "6 sd of sim DefaultNoise, this test's choice"
	cRating  = 25 // a usual continuous rating; far above these flights' currents
)

// checkElectrical compares the figures every log gives with the truth.
func checkElectrical(t *testing.T, w *worstCase, m *telemetry.Metrics, tr sim.Truth) {
	t.Helper()
	// Reference: sim truth, integral of I dt and V I dt over the noise-free
	// signal on the fine grid. Tolerance 0.5 %: acceptance criteria.
	w.check(t, "charge_mah", m.ChargeMah, tr.ChargeMah, tolChargeRel, true, accept)
	w.check(t, "energy_wh", m.EnergyWh, tr.EnergyWh, tolChargeRel, true, accept)
	// Reference: sim truth, the model's bus resistance 1 / sum(1/R_pack) over
	// the packs in parallel (pack_a and pack_v are bus figures). Tolerance
	// 10 %: acceptance criteria.
	w.checkPtr(t, "ir_mohm", m.IRMohm, tr.IRmOhm, tolIRRel, true, accept)
	// Reference: sim truth, extremes of the noise-free signal on the fine grid.
	// Tolerance: 6 noise sd, this test's choice.
	w.check(t, "peak_a", m.PeakA, tr.PeakA, tolPeakA, false, noiseTol)
	w.check(t, "min_pack_v", m.MinPackV, tr.MinPackV, tolMinPackV, false, noiseTol)
}

// TestSimTruthFullLog: all columns, three airframe sizes, 50 and 10 Hz,
// several seeds.
func TestSimTruthFullLog(t *testing.T) {
	w := newWorstCase()
	t.Cleanup(func() { t.Log("worst cases, full logs:" + w.table()) })
	for _, af := range airframes {
		for _, hz := range []float64{50, 10} {
			for seed := uint64(1); seed <= 3; seed++ {
				t.Run(fmt.Sprintf("%s/%gHz/seed%d", af.name, hz, seed), func(t *testing.T) {
					t.Parallel()
					s := af.spec(seed)
					s.SampleHz = hz
					tr, l := fly(t, s)
					m := analyze(t, l, flightParams(s, tr, cRating))
					checkElectrical(t, w, m, tr)
					// Reference: sim truth, minimum of Packs[0]'s noise-free cell volts
					// on the fine grid. Tolerance: 6 noise sd, this test's choice.
					w.checkPtr(t, "min_cell_v", m.MinCellV, tr.MinCellV, tolMinCellV, false, noiseTol)

					if len(m.Motors) != s.Rotors {
						t.Fatalf("%d motor runs, want %d", len(m.Motors), s.Rotors)
					}
					for i, mr := range m.Motors {
						// Reference: sim truth, integral of rpm/60 dt of the noise-free
						// signal on the fine grid. Tolerance 0.5 %: acceptance criteria.
						w.check(t, "revolutions", mr.Revolutions, tr.Revolutions[i], tolRevsRel, true, accept)
					}
					// Reference: sim truth, the model's cell-group resistances, which
					// add up to the pack's. Tolerance 10 %: acceptance criteria for
					// the pack resistance. One pack only: the cell columns are Packs[0]'s but
					// the steps are taken against pack_a, the bus current, so with
					// packs in parallel the figure is scaled by Packs[0]'s share.
					if len(s.Packs) == 1 {
						var sum float64
						for _, c := range m.IRCellsMohm {
							if c == nil {
								t.Fatal("a cell resistance is null")
							}
							sum += *c
						}
						if len(m.IRCellsMohm) != s.Packs[0].CellsS {
							t.Fatalf("%d cell resistances for %d cells", len(m.IRCellsMohm), s.Packs[0].CellsS)
						}
						w.check(t, "sum of ir_cells_mohm", sum, tr.Packs[0].IRmOhm, tolIRRel, true, accept+" (pack resistance)")
						w.checkPtr(t, "ir_cell_mohm", m.IRCellMohm, tr.Packs[0].CellIRmOhm, tolIRRel, true, accept+" (pack resistance)")
					}
					// Reference: sim truth, the model's k = C_T rho D^4 / 3600 (the
					// noise-free rotors obey T = k rpm^2). Tolerance 6 %: acceptance
					// criteria.
					w.checkPtr(t, "thrust_k", m.ThrustK, tr.ThrustK, tolThrustKRel, true, accept)
					// Reference: sim truth, the planted peak of the noise-free
					// touchdown pulse. Tolerance 0.15 g: acceptance criteria.
					w.checkPtr(t, "landing_g", m.LandingG, tr.LandingG, tolLandingG, false, accept)

					// Nothing was planted: a 1.4 g landing, a full pack, currents
					// far below 25 C (checked on the truth first).
					floor := mustFloor(t, s)
					p := flightParams(s, tr, cRating)
					if tr.LandingG >= telemetry.DefaultHardLandingG || tr.MinCellV <= floor ||
						tr.PeakA >= p.CRating*p.RatedMah/1000 {
						t.Fatalf("spec plants an event: landing %g g, min cell %g V, peak %g A", tr.LandingG, tr.MinCellV, tr.PeakA)
					}
					if len(m.Events) != 0 {
						t.Errorf("events %v on a flight without any", eventKinds(m))
					}
				})
			}
		}
	}
}

func mustFloor(t *testing.T, s sim.FlightSpec) float64 {
	t.Helper()
	lim, ok := fleet.Chemistry(s.Packs[0].Chemistry).Limits()
	if !ok {
		t.Fatalf("chemistry %q has no limits", s.Packs[0].Chemistry)
	}
	return lim.FloorV
}

// TestSimTruthHardLanding plants a 3.5 g touchdown, above the default 2.5 g.
func TestSimTruthHardLanding(t *testing.T) {
	w := newWorstCase()
	t.Cleanup(func() { t.Log("worst cases, hard landings:" + w.table()) })
	for _, af := range airframes[:2] {
		for _, hz := range []float64{50, 10} {
			t.Run(fmt.Sprintf("%s/%gHz", af.name, hz), func(t *testing.T) {
				t.Parallel()
				s := af.spec(11)
				s.SampleHz, s.LandingG = hz, 3.5
				tr, l := fly(t, s)
				m := analyze(t, l, flightParams(s, tr, cRating))
				// Reference: sim truth, the planted peak of the noise-free
				// touchdown pulse. Tolerance 0.15 g: acceptance criteria.
				w.checkPtr(t, "landing_g", m.LandingG, tr.LandingG, tolLandingG, false, accept)
				// A hard landing is also a fast one in the simulator; the rest
				// of the flight must still be recovered.
				checkElectrical(t, w, m, tr)
				w.checkPtr(t, "thrust_k", m.ThrustK, tr.ThrustK, tolThrustKRel, true, accept)

				e := event(m, "hard_landing")
				if e == nil {
					t.Fatalf("no hard_landing event for a %g g landing; events %v", tr.LandingG, eventKinds(m))
				}
				if e.Value != *m.LandingG || e.Limit != telemetry.DefaultHardLandingG || e.Severity != "critical" {
					t.Errorf("hard_landing %+v: want value = landing_g %g, limit %g, critical (3.5/2.5 >= 1.2)",
						*e, *m.LandingG, telemetry.DefaultHardLandingG)
				}
				// The pulse is 80 ms long from touchdown (internal/sim doc).
				if e.AtS < tr.LandingOffsetS || e.AtS > tr.LandingOffsetS+0.08 {
					t.Errorf("hard_landing at %g s, touchdown at %g s", e.AtS, tr.LandingOffsetS)
				}
				if len(m.Events) != 1 {
					t.Errorf("events %v, want only hard_landing", eventKinds(m))
				}
			})
		}
	}
}

// TestSimTruthThrottleOnly: a log with a mean throttle instead of rpm gives
// the electrical figures within the same tolerances and no rotor figures.
func TestSimTruthThrottleOnly(t *testing.T) {
	w := newWorstCase()
	t.Cleanup(func() { t.Log("worst cases, throttle-only logs:" + w.table()) })
	for _, af := range []airframe{airframes[0], airframes[2]} {
		for _, hz := range []float64{50, 10} {
			t.Run(fmt.Sprintf("%s/%gHz", af.name, hz), func(t *testing.T) {
				t.Parallel()
				s := af.spec(21)
				s.SampleHz, s.Columns = hz, sim.ColumnsThrottle
				tr, l := fly(t, s)
				if len(l.RPM) != 0 || l.Throttle == nil {
					t.Fatalf("log has %d rpm columns, throttle %v", len(l.RPM), l.Throttle != nil)
				}
				m := analyze(t, l, flightParams(s, tr, cRating))
				checkElectrical(t, w, m, tr)
				w.checkPtr(t, "min_cell_v", m.MinCellV, tr.MinCellV, tolMinCellV, false, noiseTol)
				// The accelerometer is still logged.
				w.checkPtr(t, "landing_g", m.LandingG, tr.LandingG, tolLandingG, false, accept)
				if m.HoverRPM != nil || m.ThrustK != nil || len(m.Motors) != 0 {
					t.Errorf("rpm figures without rpm: hover %v, k %v, %d motors", m.HoverRPM, m.ThrustK, len(m.Motors))
				}
				if m.Vibration == nil || m.Vibration.RotorHz != nil {
					t.Errorf("vibration %+v: want measured, without a rotor frequency", m.Vibration)
				}
				if m.RunS == nil {
					t.Error("run time missing: the throttle gives it")
				}
				if len(m.Events) != 0 {
					t.Errorf("events %v on a flight without any", eventKinds(m))
				}
			})
		}
	}
}

// TestSimTruthRequiredOnly: t_s, pack_v and pack_a alone give the electrical
// figures and nothing else.
func TestSimTruthRequiredOnly(t *testing.T) {
	w := newWorstCase()
	t.Cleanup(func() { t.Log("worst cases, required-only logs:" + w.table()) })
	for _, af := range []airframe{airframes[0], airframes[1]} {
		for _, hz := range []float64{50, 10} {
			t.Run(fmt.Sprintf("%s/%gHz", af.name, hz), func(t *testing.T) {
				t.Parallel()
				s := af.spec(31)
				s.SampleHz, s.Columns = hz, sim.ColumnsRequired
				tr, l := fly(t, s)
				p := flightParams(s, tr, cRating)
				m := analyze(t, l, p)
				checkElectrical(t, w, m, tr)
				// Without cell columns the cell figure is pack_v / cells_s (telemetry doc).
				if m.MinCellSource != "pack_v/cells_s" || m.MinCellV == nil ||
					math.Abs(*m.MinCellV-m.MinPackV/float64(p.CellsS)) > 1e-12 {
					t.Errorf("min cell %v from %q, want min pack V / %d", m.MinCellV, m.MinCellSource, p.CellsS)
				}
				for name, v := range map[string]*float64{"run_s": m.RunS, "hover_rpm": m.HoverRPM,
					"thrust_k": m.ThrustK, "max_alt_m": m.MaxAltM, "landing_g": m.LandingG,
					"landing_at_s": m.LandingAt, "distance_m": m.DistanceM, "max_range_m": m.MaxRangeM} {
					if v != nil {
						t.Errorf("%s = %g from a log without its columns", name, *v)
					}
				}
				if len(m.Motors) != 0 || m.Vibration != nil || m.AirDensitySource != "isa_site_elevation" {
					t.Errorf("%d motors, vibration %+v, density from %q", len(m.Motors), m.Vibration, m.AirDensitySource)
				}
				if len(m.Events) != 0 {
					t.Errorf("events %v on a flight without any", eventKinds(m))
				}
			})
		}
	}
}

// TestSimTruthOverdischarge plants a pack started so low that its cells sag
// under the LiPo floor near the end of the flight, and a control started a
// little higher that stays above it.
func TestSimTruthOverdischarge(t *testing.T) {
	s := sim.DefaultSpec(5)
	s.DurationS, s.SampleHz = 300, 10
	floor := mustFloor(t, s)
	lowest := lowestStartSoC(t, s)
	for _, c := range []struct {
		name    string
		startUp float64 // above the lowest start that does not exhaust the pack
		want    bool
	}{{"low", 0.002, true}, {"control", 0.02, false}} {
		t.Run(c.name, func(t *testing.T) {
			s := s
			s.Packs = []sim.PackState{s.Packs[0]}
			s.Packs[0].StartSoC = lowest + c.startUp
			tr, l := fly(t, s)
			// The plant must take (or not) in the truth itself, with margin
			// for the cell noise, or the check below means nothing.
			t.Logf("start SoC %.4f: true minimum cell %.4f V", s.Packs[0].StartSoC, tr.MinCellV)
			if c.want && !(tr.MinCellV < floor-2*tolMinCellV) || !c.want && !(tr.MinCellV > floor+2*tolMinCellV) {
				t.Fatalf("start SoC %.4f: true minimum cell %.4f V against the %g V floor", s.Packs[0].StartSoC, tr.MinCellV, floor)
			}
			m := analyze(t, l, flightParams(s, tr, cRating))
			e := event(m, "overdischarge")
			if (e != nil) != c.want {
				t.Fatalf("overdischarge %v, want %v (true minimum cell %.4f V, floor %g V)", e != nil, c.want, tr.MinCellV, floor)
			}
			w := newWorstCase()
			// Reference: sim truth, minimum of the logged pack's noise-free cell
			// volts on the fine grid. Tolerance: 6 noise sd, this test's choice.
			w.checkPtr(t, "min_cell_v", m.MinCellV, tr.MinCellV, tolMinCellV, false, noiseTol)
			if e == nil {
				return
			}
			w.check(t, "overdischarge value", e.Value, tr.MinCellV, tolMinCellV, false, noiseTol)
			if e.Limit != floor || e.AtS < tr.TakeoffOffsetS || e.AtS > tr.LandingOffsetS {
				t.Errorf("overdischarge %+v: want limit %g, under load between %g and %g s", *e, floor, tr.TakeoffOffsetS, tr.LandingOffsetS)
			}
			t.Log(w.table())
		})
	}
}

// TestSimTruthOvercurrent flies a small pack whose C x capacity is below the
// hover current, and the same log against a rating it stays within.
func TestSimTruthOvercurrent(t *testing.T) {
	s := sim.DefaultSpec(6)
	s.DurationS, s.SampleHz = 240, 10
	s.Packs[0].Serial, s.Packs[0].RatedMah, s.Packs[0].BaselineIRmOhm = "SIM-S1", 2200, 30
	tr, l := fly(t, s)
	for _, c := range []struct {
		cRating float64
		want    bool
	}{{5, true}, {25, false}} {
		t.Run(fmt.Sprintf("%gC", c.cRating), func(t *testing.T) {
			limA := c.cRating * s.Packs[0].RatedMah / 1000
			// The plant must hold in the truth, with margin for the current noise.
			if c.want && !(tr.PeakA > limA+1) || !c.want && !(tr.PeakA < limA-1) {
				t.Fatalf("true peak %g A against %g A", tr.PeakA, limA)
			}
			m := analyze(t, l, flightParams(s, tr, c.cRating))
			e := event(m, "overcurrent")
			if (e != nil) != c.want {
				t.Fatalf("overcurrent %v, want %v (true peak %g A, limit %g A)", e != nil, c.want, tr.PeakA, limA)
			}
			if e == nil {
				return
			}
			w := newWorstCase()
			// Reference: sim truth, peak of the noise-free bus current on the
			// fine grid. Tolerance: 6 noise sd, this test's choice.
			w.check(t, "overcurrent value", e.Value, tr.PeakA, tolPeakA, false, noiseTol)
			if math.Abs(e.Limit-limA) > 1e-9 || e.AtS < tr.TakeoffOffsetS-2 || e.AtS > tr.LandingOffsetS {
				t.Errorf("overcurrent %+v: want limit %g A, opened in flight (%g..%g s)", *e, limA, tr.TakeoffOffsetS, tr.LandingOffsetS)
			}
			t.Log(w.table())
		})
	}
}

// TestSimTruthLiftSpan: without the take-off and landing offsets the span is
// found from the rotor level, and the figures that depend on it still hold.
func TestSimTruthLiftSpan(t *testing.T) {
	w := newWorstCase()
	t.Cleanup(func() { t.Log("worst cases, span from the rotor level:" + w.table()) })
	for _, af := range airframes {
		for _, hz := range []float64{50, 10} {
			t.Run(fmt.Sprintf("%s/%gHz", af.name, hz), func(t *testing.T) {
				t.Parallel()
				s := af.spec(41)
				s.SampleHz = hz
				tr, l := fly(t, s)
				p := flightParams(s, tr, cRating)
				p.Airborne = nil
				m := analyze(t, l, p)
				// Reference: sim truth, the plan's take-off and landing offsets.
				// Tolerance: the simulator's spin-up (1.5 s) and ramp-down (1 s),
				// the transitions in which the rotor level crosses any threshold
				// between idle and hover (internal/sim doc), this test's choice.
				w.checkPtr(t, "airborne_from_s", m.AirborneFromS, tr.TakeoffOffsetS, 1.5, false, "sim spin-up length")
				w.checkPtr(t, "airborne_to_s", m.AirborneToS, tr.LandingOffsetS, 1.0, false, "sim ramp-down length")
				// Reference: sim truth, the model's k. Tolerance 6 %: acceptance criteria.
				w.checkPtr(t, "thrust_k", m.ThrustK, tr.ThrustK, tolThrustKRel, true, accept)
				// Reference: sim truth, the planted touchdown peak. Tolerance
				// 0.15 g: acceptance criteria.
				w.checkPtr(t, "landing_g", m.LandingG, tr.LandingG, tolLandingG, false, accept)
				if len(m.Events) != 0 {
					t.Errorf("events %v on a flight without any", eventKinds(m))
				}
			})
		}
	}
}
