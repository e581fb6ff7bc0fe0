// Package ingest turns an uploaded flight log into a recorded flight: parse,
// analyse with the facts the register holds, and store it all in one
// transaction. Stored logs can be re-analysed when the model changes.
package ingest

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/telemetry"
)

// AnalysisVersion numbers the analysis model; raise it when figures change
// so that `rotorwright reanalyze` knows what is stale. 2: mean_power_w is
// the airborne mean (log_mean_power_w the whole log's), vibration high-pass
// from the sample rate with the rotor's resolvability, load spectra split
// per interval, per-cell minima and per-pack figures in the metrics. 3:
// blank cells in optional columns are no reading (figures from the
// readings present, min_cells_v entries nullable, warnings of thin columns).
const AnalysisVersion = 3

// Ingester ingests logs into the store.
type Ingester struct {
	DB     *store.DB
	Limits telemetry.Limits
	// Health, when set, refreshes the health of what a new flight touched.
	Health *health.Service
	// Judge, when set, gives a new flight its readiness verdict as of its
	// take-off before it is written (it never refuses it; a flight without a
	// verdict is judged later, see schedule.Programme.JudgeUnjudged).
	Judge func(ctx context.Context, f *fleet.Flight) (*fleet.Readiness, error)
	// After, when set, runs after a new flight is recorded (the re-judging
	// and the due-list recompute), beside its health refresh (fresh, nil
	// without Health; the due list takes its views once it has ended). Its
	// error does not undo the flight.
	After func(ctx context.Context, f *fleet.Flight, fresh *health.Refreshing) error
	// HardLandingG overrides the analysis's hard-landing threshold (0: default).
	HardLandingG float64
}

// Request is one upload: the flight as the pilot states it (any of airframe,
// times and packs may be left for the log's metadata to supply) and the log
// as uploaded.
type Request struct {
	Flight fleet.Flight
	Log    []byte
	// Gzip says the log is gzip-compressed (it is also taken as such when
	// it starts with gzip's magic bytes).
	Gzip bool
	// ColumnMap names the map to read the log through, by name or id, or
	// "native"; empty: the map the header selects, else the native layout.
	ColumnMap string
}

// Result says which flight the log belongs to and whether it is new.
type Result struct {
	FlightID string
	Created  bool
	Unknown  []string // columns the parser ignored
	// ColumnMap is the map the log was read through (nil: native layout).
	ColumnMap *fleet.ColumnMap
	// Verdict is the new flight's readiness as of take-off (nil when not
	// judged, or when the flight was already recorded).
	Verdict *fleet.Readiness
	// HealthErr is a failed health refresh after the flight was recorded.
	HealthErr error
}

// Ingest parses, analyses and stores one log. The same log for the same
// airframe returns the flight already recorded (Created false).
func (in *Ingester) Ingest(ctx context.Context, req Request) (Result, error) {
	// A plain log is stored gzip-compressed, packed fast now and smaller
	// later by the repack job (compress.go). Packing runs beside the parse
	// and analysis (on another core) rather than after them; a refused or
	// already-recorded log stops it.
	var packed *packing
	if !req.Gzip && !bytes.HasPrefix(req.Log, gzipMagic) {
		packed = startCompress(req.Log)
		defer packed.stop()
	}
	rd, err := ReadLog(req.Log, req.Gzip, in.Limits, in.Picker(ctx, req.ColumnMap))
	if err != nil {
		return Result{}, err
	}
	log, sha := rd.Log, rd.SHA256
	f := req.Flight
	if err := in.resolve(ctx, &f, log); err != nil {
		return Result{}, err
	}
	// The flight's transaction begins now, and the stored log (the largest
	// write) goes in while the analysis runs; when the pool's share for
	// such transactions is taken (store.LoggedFlightTx), the flight is
	// written at the end.
	lf := store.LoggedFlight{Repack: packed != nil, RawBytes: rd.Bytes, Columns: log.Columns, Unknown: log.Unknown,
		Samples: log.Rows, Blank: log.Blank, ColumnMap: rd.Map}
	// The raw log is kept as uploaded: a gzip upload is stored as it came.
	raw := func() ([]byte, error) {
		if packed == nil {
			return req.Log, nil
		}
		return packed.wait()
	}
	w, err := in.DB.BeginLoggedFlight(ctx, f.AirframeID, sha)
	if err != nil {
		return Result{}, err
	}
	existing := ""
	if w != nil {
		existing = w.Existing
	} else if id, err := in.DB.FlightIDByLog(ctx, f.AirframeID, sha); err == nil {
		existing = id
	} else if fleet.ErrorCode(err) != fleet.ENOTFOUND {
		return Result{}, err
	}
	if existing != "" {
		return Result{FlightID: existing, Unknown: log.Unknown, ColumnMap: rd.Map}, nil
	}
	if w != nil {
		defer func() {
			if packed != nil {
				packed.stop() // first, so that Close need not wait for it
			}
			w.Close()
		}()
		w.StoreLog(ctx, lf, sha, AnalysisVersion, raw)
	}
	facts, err := in.DB.FlightFacts(ctx, f.AirframeID, packIDs(f.Packs))
	if err != nil {
		return Result{}, err
	}
	// The verdict as of take-off starts as soon as the take-off time is
	// known (the analysis finds it first), beside the rest of the analysis.
	var early *earlyVerdict
	if in.Judge != nil {
		early = startVerdict(ctx, in.Judge)
		defer early.cancel()
	}
	a, err := in.analyse(log, &f, facts, early.start)
	if err != nil {
		return Result{}, err
	}
	if in.Judge != nil {
		if err := f.Validate(); err != nil {
			return Result{}, err
		}
		verdict, err := early.result(ctx, &f)
		if err != nil {
			return Result{}, err
		}
		f.SetVerdict(verdict)
	}
	f.Source, f.LogSHA256 = fleet.SourceLog, &sha
	lf.Flight, lf.Analysis = &f, a
	var id string
	var created bool
	if w != nil {
		id, created, err = w.Finish(ctx, &lf)
	} else if lf.RawGz, err = raw(); err == nil {
		id, created, err = in.DB.CreateLoggedFlight(ctx, &lf)
	}
	if err != nil {
		return Result{}, err
	}
	res := Result{FlightID: id, Created: created, Unknown: log.Unknown, ColumnMap: rd.Map}
	if created {
		res.Verdict = f.ReadinessAtTakeoff
	}
	if !created {
		return res, nil
	}
	// The flight is recorded; a failed refresh is repaired by the next
	// refresh or a fleet recompute, so it does not fail the upload.
	f.ID = id
	res.HealthErr = in.Recorded(ctx, &f)
	return res, nil
}

// Recorded brings what rests on a flight just recorded (logged, or entered
// by hand) up to date: the health of what it carried is refreshed, and
// After starts beside the refresh and waits for it only where it needs the
// views. The error is the refresh's, else After's.
func (in *Ingester) Recorded(ctx context.Context, f *fleet.Flight) error {
	var fresh *health.Refreshing
	if in.Health != nil {
		fresh = in.Health.StartRefresh(ctx, f.ID)
	}
	var afterErr error
	if in.After != nil {
		afterErr = in.After(ctx, f, fresh)
	}
	if fresh != nil {
		if <-fresh.Done(); fresh.Err() != nil {
			return fresh.Err()
		}
	}
	return afterErr
}

// resolve fills the airframe and packs from the log's metadata when the
// request leaves them out, and refuses a request that contradicts the log.
func (in *Ingester) resolve(ctx context.Context, f *fleet.Flight, log *telemetry.Log) error {
	if code := log.Meta.Airframe; code != "" {
		a, err := in.DB.AirframeByCode(ctx, code)
		switch {
		case err == nil && f.AirframeID != "" && f.AirframeID != a.ID:
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "airframe_id",
				Message: fmt.Sprintf("the log's '# airframe: %s' is another airframe", code)}
		case err == nil:
			f.AirframeID = a.ID
		case fleet.ErrorCode(err) == fleet.ENOTFOUND && f.AirframeID == "":
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "airframe_id",
				Message: fmt.Sprintf("the log names airframe %q, which is not in the register", code)}
		case fleet.ErrorCode(err) != fleet.ENOTFOUND:
			return err
		}
	}
	if f.AirframeID == "" {
		return fleet.FieldError("airframe_id", "give airframe_id, or a '# airframe: CODE' line in the log")
	}
	if sw, ok := log.Meta.Other["software"]; ok && f.Software == nil {
		f.Software = &sw
	}
	if len(f.Packs) == 0 {
		for i, serial := range log.Meta.Packs {
			p, err := in.DB.PartBySerial(ctx, fleet.KindPack, serial)
			if err != nil {
				if fleet.ErrorCode(err) == fleet.ENOTFOUND {
					return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "packs",
						Message: fmt.Sprintf("the log names pack %q, which is not in the register", serial)}
				}
				return err
			}
			f.Packs = append(f.Packs, fleet.FlightPack{PartID: p.ID, Slot: i + 1})
		}
	}
	return nil
}

// analyse runs the analysis with the register's facts and settles the
// flight's take-off and landing times; timed, when set, hears them as soon
// as they are known (given, or found by the analysis), as the flight with
// them set.
func (in *Ingester) analyse(log *telemetry.Log, f *fleet.Flight, facts *store.FlightFacts, timed func(fleet.Flight)) (*store.Analysis, error) {
	p := in.params(f, facts)
	start := log.Meta.Start
	given := !f.TakeoffAt.IsZero() && !f.LandingAt.IsZero()
	if given && start != nil {
		p.Airborne = &telemetry.Span{FromS: f.TakeoffAt.Sub(*start).Seconds(), ToS: f.LandingAt.Sub(*start).Seconds()}
		if p.Airborne.FromS < log.T[0] || p.Airborne.ToS > log.T[len(log.T)-1] {
			return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "takeoff_at",
				Message: "take-off and landing must fall within the log's time span"}
		}
	}
	switch {
	case timed == nil:
	case given:
		timed(*f)
	case start != nil:
		// As settled below from the metrics.
		p.OnAirborne = func(fromS, toS float64) {
			g := *f
			g.TakeoffAt, g.LandingAt = start.Add(secs(fromS)).Round(time.Millisecond), start.Add(secs(toS)).Round(time.Millisecond)
			timed(g)
		}
	}
	m, err := telemetry.Analyze(log, p)
	if err != nil {
		return nil, err
	}
	if !given {
		if start == nil || m.AirborneFromS == nil || m.AirborneToS == nil {
			return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "takeoff_at",
				Message: "give takeoff_at and landing_at: the log has no '# start:' time or shows no rotor run"}
		}
		f.TakeoffAt = start.Add(secs(*m.AirborneFromS)).Round(time.Millisecond)
		f.LandingAt = start.Add(secs(*m.AirborneToS)).Round(time.Millisecond)
	}
	if start == nil && m.AirborneFromS != nil {
		s := f.TakeoffAt.Add(-secs(*m.AirborneFromS))
		start = &s
	}
	return toAnalysis(m, f, facts, start)
}

// params are the facts about the flight the log does not carry.
func (in *Ingester) params(f *fleet.Flight, facts *store.FlightFacts) telemetry.Params {
	a := facts.Airframe
	p := telemetry.Params{Rotors: len(facts.Layout.Positions), CellsS: a.CellsS, HardLandingG: in.HardLandingG}
	if a.RotorDiameterMM != nil {
		p.RotorDiameterM = *a.RotorDiameterMM / 1000
	}
	if f.SiteElevationM != nil {
		p.SiteElevationM = *f.SiteElevationM
	}
	// Take-off mass: as stated, else ready-to-fly mass plus the packs when all are known.
	if f.TakeoffMassG != nil {
		p.MassKg = *f.TakeoffMassG / 1000
	} else if a.EmptyMassG != nil {
		mass, known := *a.EmptyMassG, true
		for _, pk := range facts.Packs {
			if pk.MassG == nil {
				known = false
				break
			}
			mass += *pk.MassG
		}
		if known && len(facts.Packs) > 0 {
			p.MassKg = mass / 1000
		}
	}
	for i, pk := range facts.Packs {
		s, err := fleet.PackSpecsOf(pk)
		if err != nil {
			continue
		}
		p.RatedMah += s.RatedMah // packs in parallel add capacity
		if i == 0 {
			p.Chemistry, p.CellsS = s.Chemistry, s.CellsS
			if s.CRating != nil {
				p.CRating = *s.CRating
			}
		}
	}
	return p
}

// figures is the stored metrics document: the analysis's figures and each
// pack's share of them.
type figures struct {
	*telemetry.Metrics
	Packs []store.PackFigures `json:"packs"`
}

func toAnalysis(m *telemetry.Metrics, f *fleet.Flight, facts *store.FlightFacts, start *time.Time) (*store.Analysis, error) {
	packs := packFigures(m, f, facts)
	raw, err := json.Marshal(figures{Metrics: m, Packs: packs})
	if err != nil {
		return nil, err
	}
	a := &store.Analysis{Version: AnalysisVersion, Metrics: raw, Packs: packs, Key: store.KeyMetrics{
		RunS: m.RunS, ChargeMah: m.ChargeMah, EnergyWh: m.EnergyWh, MeanPowerW: m.MeanPowerW, PeakA: m.PeakA,
		MinPackV: m.MinPackV, MinCellV: m.MinCellV, RestVStart: m.RestVStart, RestVEnd: m.RestVEnd,
		IRmOhm: m.IRMohm, HoverRPM: m.HoverRPM, ThrustK: m.ThrustK, EfficiencyIndex: m.EfficiencyIndex,
		VibrationRMS: vibrationTotal(m.Vibration), LandingG: m.LandingG, MaxAltM: m.MaxAltM,
		DistanceM: m.DistanceM, AirDensity: m.AirDensity}}
	if v := m.Vibration; v != nil && a.Key.VibrationRMS != nil {
		a.Key.VibrationSampleHz, a.Key.VibrationCutoffHz = &v.SampleHz, &v.CutoffHz
	}
	for _, r := range m.Motors {
		bins, err := json.Marshal(r.Bins)
		if err != nil {
			return nil, err
		}
		a.Motors = append(a.Motors, store.MotorRun{Position: r.Position, Revolutions: r.Revolutions, RunS: r.RunS,
			MeanRPM: r.MeanRPM, ThrustMeanN: r.ThrustMeanN, Bins: bins})
	}
	for _, e := range m.Events {
		at := f.TakeoffAt
		if start != nil {
			at = start.Add(secs(e.AtS))
		}
		ev := &fleet.Event{At: at, Kind: e.Kind, Severity: e.Severity,
			Detail: e.Detail}
		if e.Kind != "hard_landing" && len(f.Packs) == 1 {
			ev.PartID = &f.Packs[0].PartID
		}
		a.Events = append(a.Events, ev)
	}
	return a, nil
}

// packFigures shares the bus figures among the packs flown in parallel (see
// store.PackFigures).
func packFigures(m *telemetry.Metrics, f *fleet.Flight, facts *store.FlightFacts) []store.PackFigures {
	n := float64(len(f.Packs))
	out := make([]store.PackFigures, 0, len(f.Packs))
	for j, pk := range f.Packs {
		pf := store.PackFigures{PartID: pk.PartID, Slot: pk.Slot, Share: 1 / n, ChargeMah: m.ChargeMah / n,
			EnergyWh: m.EnergyWh / n, RestVStart: m.RestVStart, RestVEnd: m.RestVEnd}
		if j < len(facts.Packs) {
			pf.Serial = facts.Packs[j].Serial
		}
		if pf.Slot == 0 {
			pf.Slot = j + 1
		}
		if m.IRMohm != nil {
			pf.IRmOhm = ptr(*m.IRMohm * n)
		}
		switch {
		case j == 0 && m.MinCellSource == "cells":
			pf.MinCellV, pf.MinCellSource, pf.MinCellsV = m.MinCellV, "cells", m.MinCellsV
		case j < len(facts.Packs):
			if s, err := fleet.PackSpecsOf(facts.Packs[j]); err == nil && s.CellsS > 0 {
				pf.MinCellV, pf.MinCellSource = ptr(m.MinPackV/float64(s.CellsS)), "pack_v/cells_s"
			}
		}
		out = append(out, pf)
	}
	return out
}

func ptr(v float64) *float64 { return &v }

func vibrationTotal(v *telemetry.Vibration) *float64 {
	if v == nil {
		return nil
	}
	var sum float64
	var any bool
	for _, x := range []*float64{v.X, v.Y, v.Z} {
		if x != nil {
			sum += *x * *x
			any = true
		}
	}
	if !any {
		return nil
	}
	r := math.Sqrt(sum)
	return &r
}

func packIDs(packs []fleet.FlightPack) []string {
	ids := make([]string, len(packs))
	for i, p := range packs {
		ids[i] = p.PartID
	}
	return ids
}

func secs(s float64) time.Duration { return time.Duration(s * float64(time.Second)) }

// Reanalyze recomputes stored logs' figures with the current model: those
// analysed with an older model (AnalysisVersion), or every one when all is
// set. progress, when set, is told the count done after each page.
func (in *Ingester) Reanalyze(ctx context.Context, all bool, progress func(done int)) (int, error) {
	below := AnalysisVersion
	if all {
		below = 0
	}
	done, after := 0, ""
	for {
		logs, err := in.DB.StoredLogs(ctx, after, below, 100)
		if err != nil {
			return done, err
		}
		if len(logs) == 0 {
			return done, nil
		}
		for _, s := range logs {
			if err := in.reanalyseOne(ctx, s); err != nil {
				return done, fmt.Errorf("flight %s: %w", s.Flight.ID, err)
			}
			done++
		}
		after = logs[len(logs)-1].Flight.ID
		if progress != nil {
			progress(done)
		}
	}
}

func (in *Ingester) reanalyseOne(ctx context.Context, s store.StoredLog) error {
	raw, err := Decompress(s.RawGz)
	if err != nil {
		return err
	}
	// Stored logs were accepted once; the limits may have shrunk since, which
	// must not make history unreadable. A mapped log is re-read through the
	// map's version it was first read through.
	log, err := telemetry.ParseMappedBytes(raw, s.ColumnMap,
		telemetry.Limits{MaxRows: math.MaxInt32, MaxBytes: int64(len(raw)) + 1})
	if err != nil {
		return err
	}
	facts, err := in.DB.FlightFacts(ctx, s.Flight.AirframeID, packIDs(s.Flight.Packs))
	if err != nil {
		return err
	}
	a, err := in.analyse(log, s.Flight, facts, nil)
	if err != nil {
		return err
	}
	return in.DB.ReplaceAnalysis(ctx, s.Flight.ID, a)
}
