package health

import (
	"cmp"
	"context"
	"fmt"
	"runtime"
	"slices"
	"sync/atomic"
	"time"

	"golang.org/x/sync/errgroup"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// recomputeBatch is how many parts or airframes one worker reads at once:
// enough to turn thousands of per-part round trips into a few hundred
// statements, few enough that a batch's logged runs stay small in memory.
const recomputeBatch = 64

// Recompute recomputes every motor, propeller and pack and every airframe's
// trends; progress, when set, hears the count done (from the workers, one call at a
// time not guaranteed: it must be safe for concurrent use). Batches of parts are
// read with one query per kind of record (parts, fits, rotor runs; packs
// still read their own flights and checks), computed as Part computes them
// and stored with one statement per batch, on a bounded pool of workers
// (one per CPU) so one batch's reads overlap another's arithmetic; the
// first failure stops the rest.
func (s *Service) Recompute(ctx context.Context, progress func(done, total int)) (int, error) {
	parts, err := s.DB.HealthParts(ctx)
	if err != nil {
		return 0, err
	}
	airframes, err := s.DB.AirframeIDs(ctx)
	if err != nil {
		return 0, err
	}
	// Every propeller strike, read once for all propellers.
	strikes, err := s.DB.ScopeEvents(ctx, []string{"prop_strike"}, "", nil)
	if err != nil {
		return 0, err
	}
	if strikes == nil {
		strikes = []*fleet.Event{} // none: read, so the batches read none again
	}
	total := len(parts) + len(airframes)
	var done atomic.Int64
	count := func(n int) {
		if d := done.Add(int64(n)); progress != nil && int(d)/50 > (int(d)-n)/50 {
			progress(int(d), total)
		}
	}
	run := s.withDutyMemo(true)
	g, gctx := errgroup.WithContext(ctx)
	g.SetLimit(runtime.GOMAXPROCS(0))
	for chunk := range slices.Chunk(parts, recomputeBatch) {
		g.Go(func() error {
			n, err := run.partBatch(gctx, chunk, strikes)
			count(n)
			return err
		})
	}
	for chunk := range slices.Chunk(airframes, recomputeBatch) {
		g.Go(func() error {
			err := run.trendsBatch(gctx, chunk)
			if err == nil {
				count(len(chunk))
			}
			return err
		})
	}
	err = g.Wait()
	if progress != nil && err == nil {
		progress(int(done.Load()), total)
	}
	return int(done.Load()), err
}

// partBatch computes and stores the views of a batch of parts; it returns
// how many it stored. strikes are the propeller strikes to pick from (every
// one, for the fleet); nil reads those that can concern the batch.
func (s *Service) partBatch(ctx context.Context, ids []string, strikes []*fleet.Event) (int, error) {
	if len(ids) == 0 {
		return 0, nil
	}
	parts, err := s.DB.PartsByID(ctx, ids)
	if err != nil {
		return 0, err
	}
	now := s.Now().UTC()
	// Packs read their own records, nothing the rest of the batch reads:
	// computed and stored beside it on another connection, so their reads
	// and their write overlap the rotor runs' (results are the same; only
	// the waits overlap). Each view stands alone, so the two writes need
	// not be one.
	var packs int
	g, gctx := errgroup.WithContext(ctx)
	// A relative-mode motor weighs its runs against its model's duty, a
	// fleet-wide median the memo reads once per part number: read beside
	// the rotor runs rather than after them.
	if s.duty != nil {
		seen := map[string]bool{}
		for _, p := range parts {
			if p.Kind == fleet.KindMotor && p.PartNumber != "" && !seen[p.PartNumber] && relativeMode(p) {
				seen[p.PartNumber] = true
				g.Go(func() error {
					_, _, _, err := s.modelDuty(gctx, p.PartNumber)
					return err
				})
			}
		}
	}
	g.Go(func() error {
		var rows []store.HealthRow
		for _, p := range parts {
			if p.Kind != fleet.KindPack {
				continue
			}
			v := newView(p, now)
			if err := s.pack(gctx, p, now, nil, v); err != nil {
				return fmt.Errorf("part %s: %w", p.ID, err)
			}
			rows = append(rows, store.HealthRow{ID: p.ID, Status: v.Status, View: v})
		}
		packs = len(rows)
		return s.saveViews(gctx, rows, now, false)
	})
	rows, err := s.rotorViews(gctx, parts, ids, strikes, now)
	if err == nil {
		// In the batch's order: parts of no kind with a view left out.
		rows = slices.DeleteFunc(rows, func(r store.HealthRow) bool { return r.View == nil })
		err = s.saveViews(gctx, rows, now, false)
	}
	if err := cmp.Or(g.Wait(), err); err != nil {
		return 0, err
	}
	return len(rows) + packs, nil
}

// saveViews stores the rows, if any: parts' views, or airframes' trends;
// when the refresh's views are kept (StartRefresh), encoded once, and kept
// as stored.
func (s *Service) saveViews(ctx context.Context, rows []store.HealthRow, now time.Time, trends bool) error {
	if len(rows) == 0 {
		return nil
	}
	save := s.DB.SavePartHealths
	if trends {
		save = s.DB.SaveAirframeTrendsMany
	}
	if s.stored == nil {
		return save(ctx, rows, ModelVersion, now)
	}
	if err := marshalRows(rows); err != nil {
		return err
	}
	if err := save(ctx, rows, ModelVersion, now); err != nil {
		return err
	}
	s.stored.keep(trends, rows)
	return nil
}

// rotorViews computes the views of the batch's motors and propellers, at
// their index in parts (the other rows left empty).
func (s *Service) rotorViews(ctx context.Context, parts []*fleet.Part, ids []string, strikes []*fleet.Event, now time.Time) ([]store.HealthRow, error) {
	rows := make([]store.HealthRow, len(parts))
	fits, err := s.DB.FitsOf(ctx, ids)
	if err != nil {
		return nil, err
	}
	// As FirstFitted and CurrentFit: the earliest fit's start, the open fit.
	first, open := map[string]time.Time{}, map[string]*fleet.Fit{}
	for _, f := range fits {
		if t, ok := first[f.PartID]; !ok || f.FittedAt.Before(t) {
			first[f.PartID] = f.FittedAt
		}
		if f.RemovedAt == nil {
			open[f.PartID] = f
		}
	}
	// Rotor runs: a motor's since its first fit, a fitted propeller's
	// since its open fit.
	var runIDs []string
	var runSince []time.Time
	var withBins []bool
	for _, p := range parts {
		switch {
		case p.Kind == fleet.KindMotor:
			runIDs, runSince, withBins = append(runIDs, p.ID), append(runSince, first[p.ID]), append(withBins, true)
		case p.Kind == fleet.KindPropeller && open[p.ID] != nil:
			runIDs, runSince, withBins = append(runIDs, p.ID), append(runSince, open[p.ID].FittedAt), append(withBins, false)
		}
	}
	runs, err := s.rotorRuns(ctx, runIDs, runSince, withBins)
	if err != nil {
		return nil, err
	}
	if strikes == nil {
		// Those naming a part of the batch or on the airframe a propeller
		// is fitted to now.
		var airframes []string
		for _, p := range parts {
			if f := open[p.ID]; p.Kind == fleet.KindPropeller && f != nil {
				airframes = append(airframes, f.AirframeID)
			}
		}
		if strikes, err = s.DB.StrikesOf(ctx, airframes, ids); err != nil {
			return nil, err
		}
	}
	for i, p := range parts {
		v := newView(p, now)
		switch p.Kind {
		case fleet.KindMotor:
			err = s.motorFrom(ctx, p, first[p.ID], runs[p.ID], now, v)
		case fleet.KindPropeller:
			err = s.propellerFrom(open[p.ID], runs[p.ID], propStrikes(p.ID, open[p.ID], strikes), now, v)
		default:
			continue
		}
		if err != nil {
			return nil, fmt.Errorf("part %s: %w", p.ID, err)
		}
		rows[i] = store.HealthRow{ID: p.ID, Status: v.Status, View: v}
	}
	return rows, nil
}

// newView is a part's empty view computed at now.
func newView(p *fleet.Part, now time.Time) *View {
	return &View{PartID: p.ID, Kind: p.Kind, Serial: p.Serial, ComputedAt: now, Notes: []string{}}
}

// propStrikes picks the strikes that concern a fitted propeller from every
// strike, as propeller reads them: those naming it, then those on its
// airframe naming no part, each list in id order and cut at a page as the
// per-part read is.
func propStrikes(partID string, fit *fleet.Fit, all []*fleet.Event) []time.Time {
	if fit == nil {
		return nil
	}
	var mine, onAirframe []*fleet.Event
	for _, e := range all {
		if e.PartID != nil && *e.PartID == partID {
			mine = append(mine, e)
		}
		if e.AirframeID != nil && *e.AirframeID == fit.AirframeID {
			onAirframe = append(onAirframe, e)
		}
	}
	var out []time.Time
	for i, list := range [][]*fleet.Event{mine, onAirframe} {
		// uuids order bytewise in the database, as their lower-case text does.
		slices.SortFunc(list, func(a, b *fleet.Event) int { return cmp.Compare(a.ID, b.ID) })
		for _, e := range list[:min(len(list), store.MaxPageSize)] {
			if i == 1 && e.PartID != nil {
				continue // names a part: counted above if it is this one
			}
			out = append(out, e.At)
		}
	}
	return out
}

// trendsBatch computes and stores the trends of a batch of airframes.
func (s *Service) trendsBatch(ctx context.Context, ids []string) error {
	pts, err := s.DB.AirframeTrendPointsOf(ctx, ids, s.Settings.TrendFlights)
	if err != nil {
		return err
	}
	now := s.Now().UTC()
	rows := make([]store.HealthRow, len(ids))
	for i, id := range ids {
		tv := s.trendsFrom(id, pts[id], now)
		rows[i] = store.HealthRow{ID: id, Flagged: tv.Flagged, View: tv}
	}
	return s.DB.SaveAirframeTrendsMany(ctx, rows, ModelVersion, now)
}

// rotorRuns is store.RotorRunsOf; for one flight's parts (a refresh after an
// ingest, whose runs read is most of its wait) in two halves read at once
// on two connections, so that the database's work and the decoding of the
// rows use both cores. A fleet recompute already keeps both busy with
// batches side by side.
func (s *Service) rotorRuns(ctx context.Context, ids []string, since []time.Time, bins []bool) (map[string][]store.RotorRun, error) {
	if !s.splitRuns || len(ids) < 2 {
		return s.DB.RotorRunsOf(ctx, ids, since, bins)
	}
	h := len(ids) / 2
	var other map[string][]store.RotorRun
	g, gctx := errgroup.WithContext(ctx)
	g.Go(func() (err error) {
		other, err = s.DB.RotorRunsOf(gctx, ids[h:], since[h:], bins[h:])
		return err
	})
	runs, err := s.DB.RotorRunsOf(gctx, ids[:h], since[:h], bins[:h])
	if err := cmp.Or(g.Wait(), err); err != nil {
		return nil, err
	}
	for id, list := range other {
		runs[id] = list
	}
	return runs, nil
}
