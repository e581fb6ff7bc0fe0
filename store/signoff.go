package store

import (
	"context"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

const discrepancyCols = `id, work_record_id, airframe_id, part_id, found_at, description, grounding, cleared_at,
	cleared_by, created_at`

func scanDiscrepancy(row pgx.Row) (*fleet.Discrepancy, error) {
	var d fleet.Discrepancy
	err := row.Scan(&d.ID, &d.WorkRecordID, &d.AirframeID, &d.PartID, &d.FoundAt, &d.Description, &d.Grounding,
		&d.ClearedAt, &d.ClearedBy, &d.CreatedAt)
	if err != nil {
		return nil, err
	}
	return &d, nil
}

// recordSignOff writes what a work record states beyond its work: the
// discrepancies it found (open items on the airframe, or on a part when one
// is named), the earlier discrepancies it clears, and, for a return to
// service, that no grounding discrepancy is left open on what it returns.
func recordSignOff(ctx context.Context, tx pgx.Tx, w, out *fleet.WorkRecord) error {
	for i, d := range w.Discrepancies {
		part := d.PartID
		if part == nil && w.AirframeID == nil {
			part = w.PartID
		}
		nd, err := scanDiscrepancy(tx.QueryRow(ctx, `
			INSERT INTO discrepancies (id, work_record_id, airframe_id, part_id, found_at, description, grounding)
			VALUES ($1, $2, $3, $4, $5, $6, $7) RETURNING `+discrepancyCols,
			newID(), out.ID, w.AirframeID, part, out.At, d.Description, d.Grounding))
		if err != nil {
			if fleet.ErrorCode(translate(err)) == fleet.EUNPROCESSABLE {
				return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: fmt.Sprintf("discrepancies[%d].part_id", i), Message: "unknown part"}
			}
			return err
		}
		if err := audit(ctx, tx, "discrepancy", nd.ID, nil, nd); err != nil {
			return err
		}
		out.Discrepancies = append(out.Discrepancies, nd)
	}
	for i, id := range w.Clears {
		before, err := scanDiscrepancy(tx.QueryRow(ctx, `SELECT `+discrepancyCols+` FROM discrepancies WHERE id = $1 FOR UPDATE`, id))
		if err == nil && (before.ClearedAt != nil || before.FoundAt.After(out.At)) {
			err = pgx.ErrNoRows
		}
		if err == pgx.ErrNoRows {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: fmt.Sprintf("clears[%d]", i),
				Message: "no discrepancy with this id open at the record's time"}
		} else if err != nil {
			return err
		}
		after, err := scanDiscrepancy(tx.QueryRow(ctx, `
			UPDATE discrepancies SET cleared_at = $2, cleared_by = $3 WHERE id = $1 RETURNING `+discrepancyCols,
			id, out.At, out.ID))
		if err != nil {
			return err
		}
		if err := audit(ctx, tx, "discrepancy", id, before, after); err != nil {
			return err
		}
	}
	if w.ReturnToService == nil {
		return nil
	}
	var open int
	var first string
	if err := tx.QueryRow(ctx, `
		SELECT count(*), coalesce(min(d.description), '') FROM discrepancies d
		WHERE d.grounding AND d.found_at <= $3 AND (d.cleared_at IS NULL OR d.cleared_at > $3)
		  AND (d.part_id = $2
		       OR ($1::uuid IS NOT NULL AND d.part_id IS NULL AND d.airframe_id = $1)
		       OR ($1::uuid IS NOT NULL AND d.part_id IN (SELECT part_id FROM fits WHERE airframe_id = $1 AND during @> $3::timestamptz)))`,
		w.AirframeID, w.PartID, out.At).Scan(&open, &first); err != nil {
		return err
	}
	if open > 0 {
		return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "return_to_service",
			Message: fmt.Sprintf("%d grounding discrepancies are open (e.g. %q): clear them in this record (clears) or a record before it", open, first)}
	}
	return nil
}

// attachDiscrepancies fills in the discrepancies each record found.
func (db *DB) attachDiscrepancies(ctx context.Context, list []*fleet.WorkRecord) error {
	if len(list) == 0 {
		return nil
	}
	ids := make([]string, len(list))
	byID := map[string]*fleet.WorkRecord{}
	for i, w := range list {
		ids[i], byID[w.ID] = w.ID, w
	}
	rows, err := db.pool.Query(ctx, `SELECT `+discrepancyCols+` FROM discrepancies WHERE work_record_id = ANY($1::uuid[]) ORDER BY id`, ids)
	if err != nil {
		return translate(err)
	}
	ds, err := collect(rows, scanDiscrepancy)
	if err != nil {
		return err
	}
	for _, d := range ds {
		w := byID[d.WorkRecordID]
		w.Discrepancies = append(w.Discrepancies, d)
	}
	return nil
}

// DiscrepancyFilter narrows the discrepancy listing.
type DiscrepancyFilter struct {
	AirframeID, PartID string
	Open               *bool
}

// Discrepancies lists discrepancies in id order, one keyset page. An
// airframe's are those found on it and those on parts found while fitted
// to it.
func (db *DB) Discrepancies(ctx context.Context, f DiscrepancyFilter, p Page) ([]*fleet.Discrepancy, string, error) {
	after, err := p.afterID()
	if err != nil {
		return nil, "", err
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+discrepancyCols+` FROM discrepancies
		WHERE ($1::uuid IS NULL OR id > $1) AND ($2::uuid IS NULL OR airframe_id = $2)
		  AND ($3::uuid IS NULL OR part_id = $3) AND ($4::boolean IS NULL OR (cleared_at IS NULL) = $4)
		ORDER BY id LIMIT $5`, after, nilIfEmpty(f.AirframeID), nilIfEmpty(f.PartID), f.Open, p.Limit+1)
	if err != nil {
		return nil, "", translate(err)
	}
	list, err := collect(rows, scanDiscrepancy)
	if err != nil {
		return nil, "", err
	}
	return page(list, p.Limit, func(d *fleet.Discrepancy) string { return d.ID })
}

// OpenDiscrepancy is a discrepancy open on an airframe at a moment, with
// what it is on (the tail code, or the serial of the part then fitted).
type OpenDiscrepancy struct {
	*fleet.Discrepancy
	Subject string
}

// OpenDiscrepancies lists the discrepancies open at the moment at on the
// airframe itself and on the parts fitted to it then.
func (db *DB) OpenDiscrepancies(ctx context.Context, airframeID string, at time.Time) ([]OpenDiscrepancy, error) {
	rows, err := db.pool.Query(ctx, openDiscrepanciesSQL, airframeID, at)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanOpenDiscrepancy)
}

// openDiscrepanciesSQL: $1 airframe, $2 moment.
var openDiscrepanciesSQL = `
		SELECT ` + prefixed("d.", discrepancyCols) + `, coalesce(p.serial, a.code)
		FROM discrepancies d
		LEFT JOIN parts p ON p.id = d.part_id
		LEFT JOIN airframes a ON a.id = d.airframe_id
		WHERE d.found_at <= $2 AND (d.cleared_at IS NULL OR d.cleared_at > $2)
		  AND ((d.part_id IS NULL AND d.airframe_id = $1)
		       OR d.part_id IN (SELECT part_id FROM fits WHERE airframe_id = $1 AND during @> $2::timestamptz))
		ORDER BY d.grounding DESC, d.found_at`

func scanOpenDiscrepancy(r pgx.Row) (OpenDiscrepancy, error) {
	var d fleet.Discrepancy
	var od OpenDiscrepancy
	err := r.Scan(&d.ID, &d.WorkRecordID, &d.AirframeID, &d.PartID, &d.FoundAt, &d.Description, &d.Grounding,
		&d.ClearedAt, &d.ClearedBy, &d.CreatedAt, &od.Subject)
	od.Discrepancy = &d
	return od, err
}
