package store

import (
	"context"
	"encoding/json"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// The board's fleet-wide reads: each answers for every airframe (or part)
// in one query, so a page costs a few round trips whatever the fleet size.

// FleetReadinessFacts loads the readiness facts of every airframe at the
// moment at in five queries (airframes, layouts, rotors, grounding events,
// due items), in tail-code order. Due holds only what readiness weighs and
// the page shows: the items not ok, and the most urgent item (so the next
// one due) of each airframe, in the due list's order. Most of a fleet's
// items are ok, and reading them all was most of the fleet page's time.
func (db *DB) FleetReadinessFacts(ctx context.Context, at time.Time) ([]*ReadinessFacts, error) {
	rows, err := db.pool.Query(ctx, `SELECT `+airframeCols+` FROM airframes ORDER BY code`)
	if err != nil {
		return nil, translate(err)
	}
	airframes, err := collect(rows, scanAirframe)
	if err != nil {
		return nil, err
	}
	layouts, err := db.Layouts(ctx)
	if err != nil {
		return nil, err
	}
	byName := map[string]*fleet.Layout{}
	for _, l := range layouts {
		byName[l.Name] = l
	}
	out := make([]*ReadinessFacts, len(airframes))
	byID := map[string]*ReadinessFacts{}
	for i, a := range airframes {
		out[i] = &ReadinessFacts{Airframe: a, Layout: byName[a.Layout]}
		if out[i].Layout == nil {
			out[i].Layout = &fleet.Layout{Name: a.Layout}
		}
		byID[a.ID] = out[i]
	}
	rows, err = db.pool.Query(ctx, rotorsAtSQL+` ORDER BY f.airframe_id, f.kind, f.position`, at)
	if err != nil {
		return nil, translate(err)
	}
	err = eachRotor(rows, func(id string, fr FittedRotor) {
		if rf := byID[id]; rf != nil {
			rf.Rotors = append(rf.Rotors, fr)
		}
	})
	if err != nil {
		return nil, err
	}
	rows, err = db.pool.Query(ctx, groundingEventsSQL+` AND airframe_id IS NOT NULL ORDER BY at`)
	if err != nil {
		return nil, translate(err)
	}
	events, err := collect(rows, scanEvent)
	if err != nil {
		return nil, err
	}
	for _, e := range events {
		if rf := byID[*e.AirframeID]; rf != nil {
			rf.Events = append(rf.Events, e)
		}
	}
	rows, err = db.pool.Query(ctx, fleetDueSQL)
	if err != nil {
		return nil, translate(err)
	}
	due, err := collect(rows, scanDueItem)
	if err != nil {
		return nil, err
	}
	for _, d := range due {
		if rf := byID[*d.AirframeID]; rf != nil {
			rf.Due = append(rf.Due, d)
		}
	}
	for _, rf := range out {
		rf.Empty = emptyRotorPlaces(rf.Layout, rf.Rotors)
	}
	return out, nil
}

// fleetDueSQL reads the airframes' due items that are not ok and each
// airframe's most urgent item, most urgent first.
const fleetDueSQL = `
		SELECT ` + dueItemCols + `
		FROM (SELECT d.*, row_number() OVER (PARTITION BY d.airframe_id ORDER BY ` + dueUrgency + `) AS rank
		      FROM due_items d WHERE d.airframe_id IS NOT NULL) d ` + dueItemJoins + `
		WHERE d.status <> 'ok' OR d.rank = 1
		ORDER BY ` + dueUrgency

// FleetOpenDiscrepancies lists the discrepancies open at the moment at by
// airframe (on the airframe itself or on a part fitted to it then), in
// OpenDiscrepancies' order, in one query.
func (db *DB) FleetOpenDiscrepancies(ctx context.Context, at time.Time) (map[string][]OpenDiscrepancy, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT `+prefixed("d.", discrepancyCols)+`, coalesce(p.serial, a.code), coalesce(f.airframe_id, d.airframe_id)
		FROM discrepancies d
		LEFT JOIN parts p ON p.id = d.part_id
		LEFT JOIN airframes a ON a.id = d.airframe_id
		LEFT JOIN fits f ON d.part_id IS NOT NULL AND f.part_id = d.part_id AND f.during @> $1::timestamptz
		WHERE d.found_at <= $1 AND (d.cleared_at IS NULL OR d.cleared_at > $1)
		  AND ((d.part_id IS NULL AND d.airframe_id IS NOT NULL) OR f.airframe_id IS NOT NULL)
		ORDER BY d.grounding DESC, d.found_at`, at)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	out := map[string][]OpenDiscrepancy{}
	for rows.Next() {
		var d fleet.Discrepancy
		od := OpenDiscrepancy{Discrepancy: &d}
		var airframeID string
		if err := rows.Scan(&d.ID, &d.WorkRecordID, &d.AirframeID, &d.PartID, &d.FoundAt, &d.Description, &d.Grounding,
			&d.ClearedAt, &d.ClearedBy, &d.CreatedAt, &od.Subject, &airframeID); err != nil {
			return nil, translate(err)
		}
		out[airframeID] = append(out[airframeID], od)
	}
	return out, translate(rows.Err())
}

// AirframeTotals is an airframe's time in service, flights and last flight.
type AirframeTotals struct {
	Flights   int
	Hours     float64
	LastFlown *time.Time
}

// FleetTotals returns every airframe's totals by airframe id, in one query.
// The durations are summed as intervals (exact, and cheap) and turned into
// hours once: extract yields numeric, and summing 30,000 numerics was
// most of this query's time.
func (db *DB) FleetTotals(ctx context.Context) (map[string]AirframeTotals, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT airframe_id, count(*), coalesce(extract(epoch FROM sum(landing_at - takeoff_at))::float8 / 3600, 0), max(landing_at)
		FROM flights GROUP BY airframe_id`)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	out := map[string]AirframeTotals{}
	for rows.Next() {
		var id string
		var t AirframeTotals
		if err := rows.Scan(&id, &t.Flights, &t.Hours, &t.LastFlown); err != nil {
			return nil, translate(err)
		}
		out[id] = t
	}
	return out, translate(rows.Err())
}

// OpenEventCounts counts the unresolved events of each airframe (events on
// the airframe itself or on a flight of it), in one query.
func (db *DB) OpenEventCounts(ctx context.Context) (map[string]int, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT coalesce(e.airframe_id, f.airframe_id), count(*)
		FROM events e LEFT JOIN flights f ON f.id = e.flight_id
		WHERE e.resolved_at IS NULL AND coalesce(e.airframe_id, f.airframe_id) IS NOT NULL
		GROUP BY 1`)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	out := map[string]int{}
	for rows.Next() {
		var id string
		var n int
		if err := rows.Scan(&id, &n); err != nil {
			return nil, translate(err)
		}
		out[id] = n
	}
	return out, translate(rows.Err())
}

// Labels are the tail codes and serials of records named by id.
type Labels struct {
	Airframes map[string]string // id -> tail code
	Parts     map[string]string // id -> serial
}

// LabelsOf returns the codes and serials of the given airframes and parts in
// one query.
func (db *DB) LabelsOf(ctx context.Context, airframeIDs, partIDs []string) (Labels, error) {
	l := Labels{Airframes: map[string]string{}, Parts: map[string]string{}}
	rows, err := db.pool.Query(ctx, `
		SELECT 'a', id, code FROM airframes WHERE id = ANY($1::uuid[])
		UNION ALL SELECT 'p', id, serial FROM parts WHERE id = ANY($2::uuid[])`, airframeIDs, partIDs)
	if err != nil {
		return l, translate(err)
	}
	defer rows.Close()
	for rows.Next() {
		var k, id, label string
		if err := rows.Scan(&k, &id, &label); err != nil {
			return l, translate(err)
		}
		if k == "a" {
			l.Airframes[id] = label
		} else {
			l.Parts[id] = label
		}
	}
	return l, translate(rows.Err())
}

// RecentFlight is one flight in an airframe's recent list.
type RecentFlight struct {
	ID              string
	TakeoffAt       time.Time
	LandingAt       time.Time
	Pilot           string
	JobCode         *string
	Packs           []string // serials
	PackIDs         []string
	EfficiencyIndex *float64
	ChargeMah       *float64
	LandingG        *float64
	OverrideReason  *string
	ReadyAtTakeoff  *bool // the verdict kept with the flight; nil until judged
}

// RecentFlights returns an airframe's last n flights, newest first, with
// their job, packs and a few figures, in one query.
func (db *DB) RecentFlights(ctx context.Context, airframeID string, n int) ([]RecentFlight, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT fl.id, fl.takeoff_at, fl.landing_at, fl.pilot, j.code,
			coalesce((SELECT array_agg(p.serial ORDER BY fp.slot) FROM flight_packs fp JOIN parts p ON p.id = fp.part_id
			          WHERE fp.flight_id = fl.id), '{}'),
			coalesce((SELECT array_agg(fp.part_id::text ORDER BY fp.slot) FROM flight_packs fp WHERE fp.flight_id = fl.id), '{}'),
			m.efficiency_index, m.charge_mah, m.landing_g, fl.override_reason, (fl.readiness_at_takeoff->>'ready')::boolean
		FROM flights fl LEFT JOIN jobs j ON j.id = fl.job_id LEFT JOIN flight_metrics m ON m.flight_id = fl.id
		WHERE fl.airframe_id = $1 ORDER BY fl.takeoff_at DESC LIMIT $2`, airframeID, n)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (RecentFlight, error) {
		var f RecentFlight
		return f, r.Scan(&f.ID, &f.TakeoffAt, &f.LandingAt, &f.Pilot, &f.JobCode, &f.Packs, &f.PackIDs,
			&f.EfficiencyIndex, &f.ChargeMah, &f.LandingG, &f.OverrideReason, &f.ReadyAtTakeoff)
	})
}

// PartHealthViews returns the stored health views of the given parts by id
// (parts never computed are absent), in one query.
func (db *DB) PartHealthViews(ctx context.Context, ids []string) (map[string]json.RawMessage, error) {
	rows, err := db.pool.Query(ctx, `SELECT part_id, view FROM part_health WHERE part_id = ANY($1::uuid[])`, ids)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	out := map[string]json.RawMessage{}
	for rows.Next() {
		var id string
		var v json.RawMessage
		if err := rows.Scan(&id, &v); err != nil {
			return nil, translate(err)
		}
		out[id] = v
	}
	return out, translate(rows.Err())
}

// PackAttention is a pack whose stored health asks for a check.
type PackAttention struct {
	PartID     string
	Serial     string
	Status     string
	ComputedAt time.Time
	View       json.RawMessage
}

// PacksNeedingAttention lists the packs in service whose stored health is
// not plainly serviceable or carries reasons (storage, imbalance,
// resistance...), worst first, in one query.
func (db *DB) PacksNeedingAttention(ctx context.Context) ([]PackAttention, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT p.id, p.serial, h.status, h.computed_at, h.view
		FROM part_health h JOIN parts p ON p.id = h.part_id
		WHERE p.kind = 'pack' AND p.status <> 'retired'
		  AND (h.status <> 'serviceable' OR jsonb_array_length(coalesce(h.view->'pack'->'reasons', '[]')) > 0)
		ORDER BY CASE h.status WHEN 'retire' THEN 0 WHEN 'watch' THEN 1 ELSE 2 END, p.serial`)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (PackAttention, error) {
		var a PackAttention
		return a, r.Scan(&a.PartID, &a.Serial, &a.Status, &a.ComputedAt, &a.View)
	})
}

// PackChoice is a pack a pilot may pick for a field check.
type PackChoice struct {
	ID     string
	Serial string
	Status string
	CellsS int
}

// PacksOfCells lists the packs not retired with the given cells in series,
// by serial, in one query.
func (db *DB) PacksOfCells(ctx context.Context, cells int) ([]PackChoice, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT id, serial, status, (specs->>'cells_s')::int FROM parts
		WHERE kind = 'pack' AND status <> 'retired' AND (specs->>'cells_s')::int = $1 ORDER BY serial`, cells)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (PackChoice, error) {
		var p PackChoice
		return p, r.Scan(&p.ID, &p.Serial, &p.Status, &p.CellsS)
	})
}

// JobByCode returns the job with a code.
func (db *DB) JobByCode(ctx context.Context, code string) (*fleet.Job, error) {
	j, err := scanJob(db.pool.QueryRow(ctx, `SELECT `+jobCols+` FROM jobs WHERE code = $1`, code))
	if err != nil {
		return nil, translateNotFound(err, "job")
	}
	return j, nil
}
