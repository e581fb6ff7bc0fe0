package store

import (
	"context"
	"encoding/json"
	"slices"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// FlightToJudge is a recorded flight whose take-off verdict is computed.
type FlightToJudge struct {
	ID         string
	AirframeID string
	TakeoffAt  time.Time
	Packs      []string
}

const judgeCols = `f.id, f.airframe_id, f.takeoff_at,
	coalesce((SELECT array_agg(fp.part_id::text ORDER BY fp.slot) FROM flight_packs fp WHERE fp.flight_id = f.id), '{}')`

func scanToJudge(r pgx.Row) (FlightToJudge, error) {
	var f FlightToJudge
	return f, r.Scan(&f.ID, &f.AirframeID, &f.TakeoffAt, &f.Packs)
}

// FlightsFrom returns the flights taking off at or after from that a record
// about the airframe or the packs may have changed the verdict of: the
// airframe's flights and the flights that carried any of the packs, in
// take-off order.
func (db *DB) FlightsFrom(ctx context.Context, airframeID string, packs []string, from time.Time) ([]FlightToJudge, error) {
	if packs == nil {
		packs = []string{}
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+judgeCols+` FROM flights f
		WHERE f.takeoff_at >= $3 AND (f.airframe_id = $1 OR EXISTS (
			SELECT 1 FROM flight_packs fp WHERE fp.flight_id = f.id AND fp.part_id = ANY($2::uuid[])))
		ORDER BY f.takeoff_at`, nilIfEmpty(airframeID), packs, from)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanToJudge)
}

// PartFlightsFrom returns the flights taking off at or after from on which
// the part was fitted at take-off or flew as a pack, in take-off order.
func (db *DB) PartFlightsFrom(ctx context.Context, partID string, from time.Time) ([]FlightToJudge, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT `+judgeCols+` FROM flights f
		WHERE f.takeoff_at >= $2 AND (
			EXISTS (SELECT 1 FROM flight_packs fp WHERE fp.flight_id = f.id AND fp.part_id = $1)
			OR EXISTS (SELECT 1 FROM fits x WHERE x.part_id = $1 AND x.airframe_id = f.airframe_id AND x.during @> f.takeoff_at))
		ORDER BY f.takeoff_at`, partID, from)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanToJudge)
}

// UnjudgedFlights returns up to limit flights without a verdict (recorded
// before verdicts existed, or whose judgement failed), in take-off order.
func (db *DB) UnjudgedFlights(ctx context.Context, limit int) ([]FlightToJudge, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT `+judgeCols+` FROM flights f WHERE f.readiness_at_takeoff IS NULL
		ORDER BY f.airframe_id, f.takeoff_at LIMIT $1`, limit)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanToJudge)
}

// sameVerdict reports whether two verdicts say the same: ready or not, and
// the same blockers and warnings (by code and subject; the wording, which
// carries the figures of the moment, may differ).
func sameVerdict(a, b *fleet.Readiness) bool {
	if a == nil || b == nil {
		return a == b
	}
	keys := func(items []fleet.ReadinessItem) []string {
		out := make([]string, len(items))
		for i, it := range items {
			out[i] = it.Code + "\x00" + it.Subject
		}
		slices.Sort(out)
		return out
	}
	return a.Ready == b.Ready && slices.Equal(keys(a.Blockers), keys(b.Blockers)) && slices.Equal(keys(a.Warnings), keys(b.Warnings))
}

// SetTakeoffVerdict stores a flight's re-judged take-off verdict when it
// says something else than the stored one, with its audit row, and keeps
// the flight's one flown_not_ready event in step: opened when the flight is
// now found not ready, its detail updated while open, withdrawn (deleted,
// with its audit row) while open when the flight is now found ready. A
// resolved event, or one a person recorded, stays. It reports whether
// anything changed.
func (db *DB) SetTakeoffVerdict(ctx context.Context, flightID string, rd *fleet.Readiness) (bool, error) {
	changed := false
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		f, err := scanFlight(tx.QueryRow(ctx, `SELECT `+flightCols+` FROM flights WHERE id = $1 FOR UPDATE`, flightID))
		if err != nil {
			return translateNotFound(err, "flight")
		}
		if sameVerdict(f.ReadinessAtTakeoff, rd) {
			return nil
		}
		changed = true
		b, err := json.Marshal(rd)
		if err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, `UPDATE flights SET readiness_at_takeoff = $2 WHERE id = $1`, flightID, b); err != nil {
			return err
		}
		if err := audit(ctx, tx, "flight_readiness", flightID, f.ReadinessAtTakeoff, rd); err != nil {
			return err
		}
		ev, err := scanEvent(tx.QueryRow(ctx, `
			SELECT `+eventCols+` FROM events WHERE flight_id = $1 AND kind = $2 FOR UPDATE`, flightID, fleet.EventFlownNotReady))
		switch {
		case err == pgx.ErrNoRows:
			ev = nil
		case err != nil:
			return err
		}
		f.SetVerdict(rd)
		switch {
		case ev == nil && !rd.Ready:
			_, err = insertEvent(ctx, tx, flownNotReady(f, rd))
			return err
		case ev == nil || ev.ResolvedAt != nil || !ev.Detected:
			return nil // a resolved event, or one a person recorded, stays as it is
		case rd.Ready:
			if _, err := tx.Exec(ctx, `DELETE FROM events WHERE id = $1`, ev.ID); err != nil {
				return err
			}
			return audit(ctx, tx, "event", ev.ID, ev, nil)
		default:
			after, err := scanEvent(tx.QueryRow(ctx, `
				UPDATE events SET detail = $2, version = version + 1 WHERE id = $1 RETURNING `+eventCols,
				ev.ID, fleet.FlownNotReadyDetail(rd, f.OverrideReason)))
			if err != nil {
				return err
			}
			return audit(ctx, tx, "event", ev.ID, ev, after)
		}
	})
	return changed, err
}
