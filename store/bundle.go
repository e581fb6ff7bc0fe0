package store

import (
	"context"
	"encoding/json"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// Bundle reads everything an airframe's records bundle holds from one
// consistent snapshot, row by row: callers stream each row out as it comes,
// so memory stays flat however many flights the airframe has.
type Bundle struct {
	tx         pgx.Tx
	AirframeID string
}

// ReadBundle runs fn over a read-only snapshot of the airframe's records.
func (db *DB) ReadBundle(ctx context.Context, airframeID string, fn func(*Bundle) error) error {
	tx, err := db.pool.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly})
	if err != nil {
		return translate(err)
	}
	defer tx.Rollback(ctx)
	if err := fn(&Bundle{tx: tx, AirframeID: airframeID}); err != nil {
		return translate(err)
	}
	return translate(tx.Commit(ctx))
}

// each runs a query and scans every row with fn, one at a time.
func each(ctx context.Context, tx pgx.Tx, sql string, args []any, fn func(pgx.Rows) error) error {
	rows, err := tx.Query(ctx, sql, args...)
	if err != nil {
		return err
	}
	defer rows.Close()
	for rows.Next() {
		if err := fn(rows); err != nil {
			return err
		}
	}
	return rows.Err()
}

// Airframe returns the airframe.
func (b *Bundle) Airframe(ctx context.Context) (*fleet.Airframe, error) {
	a, err := scanAirframe(b.tx.QueryRow(ctx, `SELECT `+airframeCols+` FROM airframes WHERE id = $1`, b.AirframeID))
	if err != nil {
		return nil, translateNotFound(err, "airframe")
	}
	return a, nil
}

// AuditHead is the hash of the audit log's last row when the snapshot was taken.
func (b *Bundle) AuditHead(ctx context.Context) (string, error) {
	var h *string
	err := b.tx.QueryRow(ctx, `SELECT encode(hash, 'hex') FROM audit_log ORDER BY id DESC LIMIT 1`).Scan(&h)
	if err == pgx.ErrNoRows || h == nil {
		return "", nil
	}
	return *h, err
}

// BundlePart is a part ever fitted to the airframe, with all its fits (on
// any airframe) and its software history.
type BundlePart struct {
	*fleet.Part
	Fits     []fleet.Fit          `json:"fits"`
	Software []fleet.SoftwareSpan `json:"software_history"`
}

const everFitted = `SELECT DISTINCT part_id FROM fits WHERE airframe_id = $1`

// Parts streams every part ever fitted to the airframe.
func (b *Bundle) Parts(ctx context.Context, fn func(*BundlePart) error) error {
	return each(ctx, b.tx, `
		SELECT `+partCols+`,
			(SELECT coalesce(json_agg(json_build_object('id', f.id, 'part_id', f.part_id, 'airframe_id', f.airframe_id,
				'kind', f.kind, 'position', f.position, 'fitted_at', lower(f.during), 'removed_at', upper(f.during),
				'removal_reason', f.removal_reason) ORDER BY lower(f.during)), '[]') FROM fits f WHERE f.part_id = parts.id),
			(SELECT coalesce(json_agg(json_build_object('version', s.version, 'from', lower(s.during), 'to', upper(s.during),
				'work_record_id', s.work_record_id) ORDER BY lower(s.during) NULLS FIRST), '[]') FROM part_software s WHERE s.part_id = parts.id)
		FROM parts WHERE id IN (`+everFitted+`) ORDER BY kind, serial`, []any{b.AirframeID}, func(r pgx.Rows) error {
		var p fleet.Part
		var fits, sw []byte
		if err := r.Scan(&p.ID, &p.Kind, &p.Serial, &p.PartNumber, &p.Lot, &p.Maker, &p.AcquiredOn, &p.MassG,
			&p.Status, &p.RetiredReason, &p.Specs, &p.SoftwareVersion, &p.Notes, &p.Version, &p.CreatedAt, &p.UpdatedAt,
			&fits, &sw); err != nil {
			return err
		}
		bp := &BundlePart{Part: &p}
		if err := json.Unmarshal(fits, &bp.Fits); err != nil {
			return err
		}
		if err := json.Unmarshal(sw, &bp.Software); err != nil {
			return err
		}
		return fn(bp)
	})
}

// BundleFlight is a flight with its packs, log facts and figures.
type BundleFlight struct {
	*fleet.Flight
	LogSamples *int            `json:"log_samples"`
	Metrics    json.RawMessage `json:"metrics"`
}

// Flights streams the airframe's flights in take-off order.
func (b *Bundle) Flights(ctx context.Context, fn func(*BundleFlight) error) error {
	return each(ctx, b.tx, `
		SELECT `+prefixed("f.", flightCols)+`,
			(SELECT coalesce(json_agg(json_build_object('part_id', fp.part_id, 'serial', p.serial, 'part_number', p.part_number,
				'lot', p.lot, 'slot', fp.slot) ORDER BY fp.slot), '[]') FROM flight_packs fp JOIN parts p ON p.id = fp.part_id
				WHERE fp.flight_id = f.id),
			l.samples, coalesce(m.metrics, 'null'::jsonb)
		FROM flights f LEFT JOIN flight_logs l ON l.flight_id = f.id LEFT JOIN flight_metrics m ON m.flight_id = f.id
		WHERE f.airframe_id = $1 ORDER BY f.takeoff_at`, []any{b.AirframeID}, func(r pgx.Rows) error {
		var packs []byte
		bf := &BundleFlight{}
		f, err := scanFlightWith(r, &packs, &bf.LogSamples, &bf.Metrics)
		if err != nil {
			return err
		}
		bf.Flight = f
		if err := json.Unmarshal(packs, &f.Packs); err != nil {
			return err
		}
		return fn(bf)
	})
}

// Logs streams the airframe's stored raw logs (gzip), in take-off order.
func (b *Bundle) Logs(ctx context.Context, fn func(flightID string, takeoff time.Time, gz []byte) error) error {
	return each(ctx, b.tx, `
		SELECT f.id, f.takeoff_at, l.raw_gz FROM flights f JOIN flight_logs l ON l.flight_id = f.id
		WHERE f.airframe_id = $1 ORDER BY f.takeoff_at`, []any{b.AirframeID}, func(r pgx.Rows) error {
		var id string
		var at time.Time
		var gz []byte
		if err := r.Scan(&id, &at, &gz); err != nil {
			return err
		}
		return fn(id, at, gz)
	})
}

// WorkRecords streams the work records on the airframe or on any part ever
// fitted to it, in time order.
func (b *Bundle) WorkRecords(ctx context.Context, fn func(*fleet.WorkRecord) error) error {
	return each(ctx, b.tx, `
		SELECT `+workCols+` FROM work_records
		WHERE airframe_id = $1 OR part_id IN (`+everFitted+`) ORDER BY at, id`, []any{b.AirframeID}, func(r pgx.Rows) error {
		w, err := scanWork(r)
		if err != nil {
			return err
		}
		return fn(w)
	})
}

// Events streams the events on the airframe, its flights or any part ever
// fitted to it.
func (b *Bundle) Events(ctx context.Context, fn func(*fleet.Event) error) error {
	return each(ctx, b.tx, `
		SELECT `+eventCols+` FROM events
		WHERE airframe_id = $1 OR part_id IN (`+everFitted+`)
		   OR flight_id IN (SELECT id FROM flights WHERE airframe_id = $1) ORDER BY at, id`, []any{b.AirframeID},
		func(r pgx.Rows) error {
			e, err := scanEvent(r)
			if err != nil {
				return err
			}
			return fn(e)
		})
}

// Discrepancies streams the discrepancies on the airframe or its parts.
func (b *Bundle) Discrepancies(ctx context.Context, fn func(*fleet.Discrepancy) error) error {
	return each(ctx, b.tx, `
		SELECT `+discrepancyCols+` FROM discrepancies
		WHERE airframe_id = $1 OR part_id IN (`+everFitted+`) ORDER BY found_at, id`, []any{b.AirframeID},
		func(r pgx.Rows) error {
			d, err := scanDiscrepancy(r)
			if err != nil {
				return err
			}
			return fn(d)
		})
}

// Audit streams the audit rows of the bundle's entities, in chain order.
func (b *Bundle) Audit(ctx context.Context, fn func(*AuditEntry) error) error {
	return each(ctx, b.tx, `
		WITH p AS (`+everFitted+`)
		SELECT id, at, actor, actor_name, request_id, client_request_id, method, route, entity, entity_id, before, after,
			encode(prev_hash, 'hex'), encode(hash, 'hex')
		FROM audit_log a
		WHERE (a.entity = 'airframe' AND a.entity_id = $1::text)
		   OR (a.entity = 'part' AND a.entity_id IN (SELECT part_id::text FROM p))
		   OR (a.entity = 'fit' AND a.entity_id IN (SELECT id::text FROM fits WHERE part_id IN (SELECT part_id FROM p)))
		   OR (a.entity IN ('flight', 'flight_analysis') AND a.entity_id IN (SELECT id::text FROM flights WHERE airframe_id = $1))
		   OR (a.entity = 'event' AND a.entity_id IN (SELECT id::text FROM events WHERE airframe_id = $1
		        OR part_id IN (SELECT part_id FROM p) OR flight_id IN (SELECT id FROM flights WHERE airframe_id = $1)))
		   OR (a.entity = 'work_record' AND a.entity_id IN (SELECT id::text FROM work_records WHERE airframe_id = $1
		        OR part_id IN (SELECT part_id FROM p)))
		   OR (a.entity = 'discrepancy' AND a.entity_id IN (SELECT id::text FROM discrepancies WHERE airframe_id = $1
		        OR part_id IN (SELECT part_id FROM p)))
		   OR (a.entity = 'notice_decision' AND split_part(a.entity_id, '/', 2) IN (SELECT part_id::text FROM p UNION SELECT $1::text))
		ORDER BY a.id`, []any{b.AirframeID}, func(r pgx.Rows) error {
		var e AuditEntry
		if err := r.Scan(&e.ID, &e.At, &e.Actor, &e.ActorName, &e.RequestID, &e.ClientRequestID, &e.Method, &e.Route, &e.Entity, &e.EntityID,
			&e.Before, &e.After, &e.PrevHash, &e.Hash); err != nil {
			return err
		}
		return fn(&e)
	})
}
