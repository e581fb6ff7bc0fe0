package store

import (
	"context"
	"encoding/json"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// The board's fleet-wide reads: each answers for every airframe (or part)
// in one query, so a page costs a few round trips whatever the fleet size
// (the fleet page's own reads are in fleetnow.go).

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
