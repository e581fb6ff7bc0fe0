package store

import (
	"cmp"
	"context"
	"slices"
	"time"

	gojson "github.com/goccy/go-json"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"

	"github.com/rotorwright/rotorwright/fleet"
)

// Reads and writes for recomputing many health views at once: a fleet
// recompute reads each kind of record for a batch of parts in one query
// instead of one query per part.

// PartsByID returns the parts with the given ids (missing ones left out).
func (db *DB) PartsByID(ctx context.Context, ids []string) ([]*fleet.Part, error) {
	rows, err := db.pool.Query(ctx, `SELECT `+partCols+` FROM parts WHERE id = ANY($1::uuid[])`, ids)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanPart)
}

// FitsOf returns every fit, open or ended, of the given parts.
func (db *DB) FitsOf(ctx context.Context, partIDs []string) ([]*fleet.Fit, error) {
	rows, err := db.pool.Query(ctx, `SELECT `+fitCols+` FROM fits WHERE part_id = ANY($1::uuid[])`, partIDs)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (*fleet.Fit, error) { return scanFit(r) })
}

// RotorRunsOf is RotorRuns for many parts in one query: for each part, the
// runs of the position it was fitted at on every flight while fitted, from
// its since on, by part, oldest first. Bins come as BinsArray, read from
// bins_packed (migration 023): no JSON to print and parse again, and no
// float8[] to send element by element. Only the parts with bins set get
// them (a motor's wear reads them, a propeller's does not): they are most
// of a run's bytes, and a propeller's runs are its motor's again.
func (db *DB) RotorRunsOf(ctx context.Context, partIDs []string, since []time.Time, bins []bool) (map[string][]RotorRun, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT f.part_id, fl.id, fl.takeoff_at, fl.airframe_id, mr.position, mr.run_s, mr.revolutions, mr.mean_rpm,
			mr.thrust_mean_n, CASE WHEN q.bins THEN mr.bins_packed END
		FROM unnest($1::uuid[], $2::timestamptz[], $3::boolean[]) AS q (part_id, since, bins)
		JOIN fits f ON f.part_id = q.part_id
		JOIN flights fl ON `+fitAtTakeoff+`
		JOIN motor_runs mr ON mr.flight_id = fl.id AND mr.position = f.position
		WHERE fl.takeoff_at >= q.since`, partIDs, since, bins)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	out := map[string][]RotorRun{}
	// Ids and positions repeat (four motors share each flight, every run
	// its airframe): each is made a string once rather than once a row.
	ids, positions := map[[16]byte]string{}, map[string]string{}
	uuid := func(u pgtype.UUID) string {
		s, ok := ids[u.Bytes]
		if !ok {
			s = u.String()
			ids[u.Bytes] = s
		}
		return s
	}
	for rows.Next() {
		var part, flight, airframe pgtype.UUID
		var m RotorRun
		if err := rows.Scan(&part, &flight, &m.TakeoffAt, &airframe, nil, &m.RunS, &m.Revolutions,
			&m.MeanRPM, &m.ThrustMeanN, nil); err != nil {
			return nil, translate(err)
		}
		id := uuid(part)
		m.FlightID, m.AirframeID = uuid(flight), uuid(airframe)
		pos := rows.RawValues()[4] // text: its bytes in either format
		if m.Position = positions[string(pos)]; m.Position == "" {
			m.Position = string(pos)
			positions[m.Position] = m.Position
		}
		if b := rows.RawValues()[9]; b != nil {
			if m.BinsArray, err = packedBins(rows.FieldDescriptions()[9].Format, b); err != nil {
				return nil, err
			}
		}
		out[id] = append(out[id], m)
	}
	if err := rows.Err(); err != nil {
		return nil, translate(err)
	}
	// Oldest first, sorted here: the database's sort of the wide rows cost
	// more than this one of each part's runs. Not a stable sort (its merges
	// moved the wide rows many times over): one part's runs are on flights
	// at distinct times, and the flight id breaks any tie all the same.
	for _, list := range out {
		slices.SortFunc(list, func(a, b RotorRun) int {
			return cmp.Or(a.TakeoffAt.Compare(b.TakeoffAt), cmp.Compare(a.FlightID, b.FlightID))
		})
	}
	return out, nil
}

// StrikesOf returns the propeller strikes on the airframes or naming the
// parts.
func (db *DB) StrikesOf(ctx context.Context, airframeIDs, partIDs []string) ([]*fleet.Event, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT `+eventCols+` FROM events
		WHERE kind = 'prop_strike' AND (airframe_id = ANY($1::uuid[]) OR part_id = ANY($2::uuid[]))`, airframeIDs, partIDs)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanEvent)
}

// AirframeTrendPointsOf is AirframeTrendPoints (now) for many airframes in
// one query: the last n logged flights of each, oldest first.
func (db *DB) AirframeTrendPointsOf(ctx context.Context, airframeIDs []string, n int) (map[string][]TrendPoint, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT a.id::text, last.*
		FROM unnest($1::uuid[]) AS a (id)
		CROSS JOIN LATERAL (
			SELECT `+trendPointCols+`
			FROM flights f JOIN flight_metrics m ON m.flight_id = f.id
			WHERE f.airframe_id = a.id
			ORDER BY f.takeoff_at DESC LIMIT $2) last
		ORDER BY a.id, last.takeoff_at`, airframeIDs, n)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	out := map[string][]TrendPoint{}
	for rows.Next() {
		var id string
		p, err := scanTrendPoint(rows, &id)
		if err != nil {
			return nil, translate(err)
		}
		out[id] = append(out[id], p)
	}
	return out, translate(rows.Err())
}

// HealthRow is one computed view to store: a part's health (Flagged unused)
// or an airframe's trends (Status unused).
type HealthRow struct {
	ID      string
	Status  string
	Flagged bool
	View    any
	JSON    []byte // View encoded (MarshalView), when the caller encoded it
}

// SavePartHealths stores many parts' health views in one statement, as
// SavePartHealth does one.
func (db *DB) SavePartHealths(ctx context.Context, rows []HealthRow, model int, at time.Time) error {
	ids, statuses, views, err := healthArrays(rows)
	if err != nil {
		return err
	}
	_, err = db.pool.Exec(ctx, `
		INSERT INTO part_health (part_id, computed_at, status, view, model_version)
		SELECT id, $4, status, view::jsonb, $5 FROM unnest($1::uuid[], $2::text[], $3::text[]) AS v (id, status, view)
		ON CONFLICT (part_id) DO UPDATE SET computed_at = EXCLUDED.computed_at, status = EXCLUDED.status, view = EXCLUDED.view,
			model_version = EXCLUDED.model_version`,
		ids, statuses, views, at, model)
	return translate(err)
}

// SaveAirframeTrendsMany stores airframes' computed trends (each row's
// Flagged and View), computed by the health model numbered model, in one
// statement.
func (db *DB) SaveAirframeTrendsMany(ctx context.Context, rows []HealthRow, model int, at time.Time) error {
	ids, _, views, err := healthArrays(rows)
	if err != nil {
		return err
	}
	flagged := make([]bool, len(rows))
	for i, r := range rows {
		flagged[i] = r.Flagged
	}
	_, err = db.pool.Exec(ctx, `
		INSERT INTO airframe_trends (airframe_id, computed_at, flagged, view, model_version)
		SELECT id, $4, flagged, view::jsonb, $5 FROM unnest($1::uuid[], $2::boolean[], $3::text[]) AS v (id, flagged, view)
		ON CONFLICT (airframe_id) DO UPDATE SET computed_at = EXCLUDED.computed_at, flagged = EXCLUDED.flagged, view = EXCLUDED.view,
			model_version = EXCLUDED.model_version`,
		ids, flagged, views, at, model)
	return translate(err)
}

// MarshalView encodes a health view or trends to store: goccy/go-json,
// several times faster than encoding/json on the long series of a view, to
// the same bytes (TestMarshalViewAsStdlib in health).
func MarshalView(v any) ([]byte, error) { return gojson.Marshal(v) }

// healthArrays marshals the views; they travel as text and are cast to
// jsonb in the statement.
func healthArrays(rows []HealthRow) (ids, statuses, views []string, err error) {
	ids, statuses, views = make([]string, len(rows)), make([]string, len(rows)), make([]string, len(rows))
	for i, r := range rows {
		b := r.JSON
		if b == nil {
			if b, err = MarshalView(r.View); err != nil {
				return nil, nil, nil, err
			}
		}
		ids[i], statuses[i], views[i] = r.ID, r.Status, string(b)
	}
	return ids, statuses, views, nil
}
