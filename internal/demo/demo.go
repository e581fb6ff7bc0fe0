// Package demo writes the simulator's invented demo firm into the register
// through the same store calls the API makes.
package demo

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"runtime"
	"sort"
	"sync"
	"sync/atomic"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

// Summary counts what Load wrote.
type Summary struct {
	Airframes, Parts, Fits, Jobs, Flights, Events int
	Took                                          time.Duration
}

// Progress receives one line per phase of the load.
type Progress func(format string, args ...any)

// Loaded reports whether the demo firm is already in the database (its first
// airframe exists), so that a restarted demo does not load it twice.
func Loaded(ctx context.Context, db *store.DB, sc *sim.Scenario) (bool, error) {
	if len(sc.Airframes) == 0 {
		return false, nil
	}
	_, err := db.AirframeByCode(ctx, sc.Airframes[0].Code)
	switch fleet.ErrorCode(err) {
	case "":
		return true, nil
	case fleet.ENOTFOUND:
		return false, nil
	}
	return false, err
}

// Load writes the scenario: airframes, parts, fits and removals in time
// order, jobs, every flight by ingesting its simulated log, and the recorded
// events.
func Load(ctx context.Context, db *store.DB, sc *sim.Scenario, progress Progress) (Summary, error) {
	start := time.Now()
	if progress == nil {
		progress = func(string, ...any) {}
	}
	ctx = store.WithActor(ctx, store.Actor{Name: "demo loader", Method: "CLI", Route: "demo"})
	l := &loader{ctx: ctx, db: db, airframes: map[string]string{}, parts: map[string]string{}, jobs: map[string]string{}}
	steps := []struct {
		name string
		fn   func(*sim.Scenario) error
	}{
		{"airframes", l.loadAirframes},
		{"parts", l.loadParts},
		{"fits", l.loadFits},
		{"jobs", l.loadJobs},
		// Before the flights, so each is judged at take-off with its
		// inspections on record (none is re-judged later).
		{"inspections", l.loadInspections},
		{"flights", func(sc *sim.Scenario) error { return l.loadFlights(sc, progress) }},
		{"events", l.loadEvents},
		{"pack checks", l.loadPackChecks},
		{"part statuses", l.loadStatuses},
		{"health and due list", func(*sim.Scenario) error {
			r, err := schedule.NewProgramme(l.db, health.New(l.db)).RecomputeAll(l.ctx)
			progress("demo: health of %d parts and airframes, %d take-off verdicts and %d due items computed",
				r.HealthViews, r.Judged, r.DueItems)
			return err
		}},
	}
	for _, s := range steps {
		if err := s.fn(sc); err != nil {
			return l.sum, fmt.Errorf("demo %s: %w", s.name, err)
		}
	}
	l.sum.Took = time.Since(start)
	return l.sum, nil
}

type loader struct {
	ctx       context.Context
	db        *store.DB
	airframes map[string]string // code -> id
	parts     map[string]string // serial -> id
	jobs      map[string]string
	flights   []string // index -> id
	sum       Summary
}

func (l *loader) loadAirframes(sc *sim.Scenario) error {
	for _, a := range sc.Airframes {
		out, err := l.db.CreateAirframe(l.ctx, &fleet.Airframe{Code: a.Code, Name: a.Name, Model: a.Model,
			Layout: a.Layout, CellsS: a.CellsS, PacksPerFlight: a.PacksPerFlight, EmptyMassG: ptr(a.EmptyMassG),
			MTOWG: ptr(a.MTOWG), RotorDiameterMM: ptr(a.RotorDiameterMM), Notes: a.Notes})
		if err != nil {
			return fmt.Errorf("%s: %w", a.Code, err)
		}
		l.airframes[a.Code] = out.ID
		l.sum.Airframes++
	}
	return nil
}

func (l *loader) loadParts(sc *sim.Scenario) error {
	for _, p := range sc.Parts {
		specs, err := specsOf(p)
		if err != nil {
			return err
		}
		acq := p.AcquiredOn.Format(time.DateOnly)
		out, err := l.db.CreatePart(l.ctx, &fleet.Part{Kind: fleet.PartKind(p.Kind), Serial: p.Serial,
			PartNumber: p.PartNumber, Lot: p.Lot, Maker: p.Maker, AcquiredOn: &acq, MassG: ptr(p.MassG), Specs: specs})
		if err != nil {
			return fmt.Errorf("%s: %w", p.Serial, err)
		}
		l.parts[p.Serial] = out.ID
		l.sum.Parts++
	}
	return nil
}

func specsOf(p sim.Part) (json.RawMessage, error) {
	var v any = map[string]any{}
	switch {
	case p.Motor != nil:
		m := p.Motor
		s := fleet.MotorSpecs{KV: ptr(m.KV), Rotation: fleet.Rotation(m.Rotation)}
		if m.BearingCount > 0 {
			// Motor makers rarely publish their bearings' ratings: the demo's
			// motors leave them out, so their wear is weighed against the rated
			// interval at the model's typical duty (relative mode).
			s.Bearing = &fleet.BearingSpecs{Count: m.BearingCount}
		}
		v = s
	case p.Propeller != nil:
		v = fleet.PropellerSpecs{DiameterIn: p.Propeller.DiameterIn, PitchIn: ptr(p.Propeller.PitchIn),
			Blades: p.Propeller.Blades, Rotation: fleet.Rotation(p.Propeller.Rotation)}
	case p.Pack != nil:
		k := p.Pack
		v = fleet.PackSpecs{Chemistry: fleet.Chemistry(k.Chemistry), CellsS: k.CellsS, CellsP: k.CellsP,
			RatedMah: k.RatedMah, CRating: ptr(k.CRating), BaselineIRmOhm: ptr(k.BaselineIRmOhm)}
	}
	return json.Marshal(v)
}

// loadFits replays fits and removals in time order; at one instant removals
// go first so the replacement can take the freed position.
func (l *loader) loadFits(sc *sim.Scenario) error {
	type op struct {
		at     time.Time
		remove bool
		fit    sim.Fit
		work   *sim.WorkRecord
	}
	// A replacement is made by its work record, which removes and fits in one
	// transaction: its two fit changes are not replayed on their own.
	swapped := map[string]bool{}
	var ops []op
	for i := range sc.WorkRecords {
		w := &sc.WorkRecords[i]
		if w.Action == "replace" {
			swapped[w.RemovedSerial+"@"+w.At.String()] = true
			swapped[w.FittedSerial+"@"+w.At.String()] = true
		}
		ops = append(ops, op{at: w.At, work: w})
	}
	for _, f := range sc.Fits {
		if !swapped[f.Serial+"@"+f.From.String()] {
			ops = append(ops, op{at: f.From, fit: f})
		}
		if !f.To.IsZero() && !swapped[f.Serial+"@"+f.To.String()] {
			ops = append(ops, op{at: f.To, remove: true, fit: f})
		}
	}
	sort.SliceStable(ops, func(i, j int) bool {
		if !ops[i].at.Equal(ops[j].at) {
			return ops[i].at.Before(ops[j].at)
		}
		return ops[i].remove && !ops[j].remove
	})
	for _, o := range ops {
		if o.work != nil {
			if err := l.loadWork(o.work); err != nil {
				return fmt.Errorf("work record at %s: %w", o.work.Airframe, err)
			}
			continue
		}
		af, part := l.airframes[o.fit.Airframe], l.parts[o.fit.Serial]
		var err error
		if o.remove {
			_, err = l.db.Remove(l.ctx, af, store.RemovalRequest{PartID: part, At: o.at, Reason: "replaced"})
		} else {
			_, err = l.db.Fit(l.ctx, af, store.FitRequest{PartID: part, Position: o.fit.Position, At: o.at})
			l.sum.Fits++
		}
		if err != nil {
			return fmt.Errorf("%s at %s/%s: %w", o.fit.Serial, o.fit.Airframe, o.fit.Position, err)
		}
	}
	return nil
}

func (l *loader) loadWork(w *sim.WorkRecord) error {
	af := l.airframes[w.Airframe]
	rec := &fleet.WorkRecord{At: w.At, AirframeID: &af, Action: w.Action, Work: w.Notes, PerformedBy: w.PerformedBy}
	if w.RemovedSerial != "" {
		id := l.parts[w.RemovedSerial]
		rec.RemovedPartID, rec.PartID = &id, &id
	}
	if w.FittedSerial != "" {
		id := l.parts[w.FittedSerial]
		rec.FittedPartID = &id
	}
	_, err := l.db.CreateWorkRecord(l.ctx, rec)
	return err
}

func (l *loader) loadJobs(sc *sim.Scenario) error {
	for _, j := range sc.Jobs {
		s, e := j.StartsOn.Format(time.DateOnly), j.EndsOn.Format(time.DateOnly)
		out, err := l.db.CreateJob(l.ctx, &fleet.Job{Code: j.Code, Client: j.Client, Site: j.Site.Name,
			StartsOn: &s, EndsOn: &e, Notes: j.Notes})
		if err != nil {
			return fmt.Errorf("%s: %w", j.Code, err)
		}
		l.jobs[j.Code] = out.ID
		l.sum.Jobs++
	}
	return nil
}

// loadFlights simulates each flight's log and ingests it through the same
// code path as an upload. Flights are independent records (their overlaps
// are ruled out by the scenario and checked by the database), so several
// are simulated and ingested at once.
func (l *loader) loadFlights(sc *sim.Scenario, progress Progress) error {
	in := &ingest.Ingester{DB: l.db}
	l.flights = make([]string, len(sc.Flights))
	work := make(chan int)
	errc := make(chan error, 1)
	var done atomic.Int64
	var wg sync.WaitGroup
	ctx, cancel := context.WithCancel(l.ctx)
	defer cancel()
	for w := 0; w < max(2, runtime.GOMAXPROCS(0)); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range work {
				id, err := l.ingestFlight(ctx, in, sc.Flights[i])
				if err != nil {
					select {
					case errc <- fmt.Errorf("flight %d of %s at %s: %w", i, sc.Flights[i].Airframe,
						sc.Flights[i].TakeoffAt.Format(time.RFC3339), err):
					default:
					}
					cancel()
					return
				}
				l.flights[i] = id
				if n := done.Add(1); n%100 == 0 || int(n) == len(sc.Flights) {
					progress("demo: %d/%d flights simulated and ingested", n, len(sc.Flights))
				}
			}
		}()
	}
feed:
	for i := range sc.Flights {
		select {
		case work <- i:
		case <-ctx.Done():
			break feed
		}
	}
	close(work)
	wg.Wait()
	select {
	case err := <-errc:
		return err
	default:
	}
	l.sum.Flights = int(done.Load())
	return ctx.Err()
}

func (l *loader) ingestFlight(ctx context.Context, in *ingest.Ingester, f sim.Flight) (string, error) {
	var buf bytes.Buffer
	if _, err := sim.Generate(f.Spec, &buf); err != nil {
		return "", err
	}
	fl := fleet.Flight{AirframeID: l.airframes[f.Airframe], Pilot: f.Pilot, TakeoffAt: f.TakeoffAt,
		LandingAt: f.LandingAt, TakeoffMassG: ptr(f.TakeoffMassG), SiteElevationM: ptr(f.Spec.SiteElevationM)}
	if id, ok := l.jobs[f.Job]; ok {
		fl.JobID = &id
	}
	for i, s := range f.Packs {
		fl.Packs = append(fl.Packs, fleet.FlightPack{PartID: l.parts[s], Slot: i + 1})
	}
	res, err := in.Ingest(ctx, ingest.Request{Flight: fl, Log: buf.Bytes()})
	return res.FlightID, err
}

func (l *loader) loadEvents(sc *sim.Scenario) error {
	for _, e := range sc.Events {
		ev := &fleet.Event{At: e.At, Kind: e.Kind, Severity: e.Severity, Detail: e.Detail}
		if id, ok := l.airframes[e.Airframe]; ok {
			ev.AirframeID = &id
		}
		if id, ok := l.parts[e.PartSerial]; ok {
			ev.PartID = &id
		}
		if e.Flight >= 0 && e.Flight < len(l.flights) {
			ev.FlightID = &l.flights[e.Flight]
		}
		if _, err := l.db.CreateEvent(l.ctx, ev); err != nil {
			return fmt.Errorf("%s event: %w", e.Kind, err)
		}
		l.sum.Events++
	}
	return nil
}

func (l *loader) loadPackChecks(sc *sim.Scenario) error {
	for _, c := range sc.PackChecks {
		pc := &store.PackCheck{PartID: l.parts[c.Serial], At: c.At, Kind: c.Kind, MahIn: ptr(c.MahIn),
			RestVAfter: ptr(c.RestV), CellV: c.CellV, CellIRmOhm: c.CellIRmOhm}
		if c.Kind == "capacity_test" {
			// The scenario's acceptance test: discharged from full to cut-off.
			pc.MahIn, pc.MahOut, pc.RestVBefore, pc.RestVAfter = nil, ptr(c.MahIn), ptr(c.RestV), nil
		}
		if _, err := l.db.CreatePackCheck(l.ctx, pc); err != nil {
			return fmt.Errorf("%s check: %w", c.Serial, err)
		}
	}
	return nil
}

// loadStatuses sets the statuses the fits do not imply (quarantine, retired).
func (l *loader) loadStatuses(sc *sim.Scenario) error {
	for _, p := range sc.Parts {
		if p.Status != fleet.PartQuarantine && p.Status != fleet.PartRetired {
			continue
		}
		cur, err := l.db.Part(l.ctx, l.parts[p.Serial])
		if err != nil {
			return err
		}
		_, err = l.db.UpdatePart(l.ctx, cur.ID, cur.Version, func(x *fleet.Part) error {
			x.Status = p.Status
			if p.Status == fleet.PartRetired {
				reason := "demo: retired"
				x.RetiredReason = &reason
			}
			return nil
		})
		if err != nil {
			return fmt.Errorf("%s: %w", p.Serial, err)
		}
	}
	return nil
}

// ptr returns &v, or nil for zero (the scenario leaves unknowns at zero).
func ptr(v float64) *float64 {
	if v == 0 {
		return nil
	}
	return &v
}
