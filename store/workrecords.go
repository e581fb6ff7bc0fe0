package store

import (
	"context"
	"fmt"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

const workCols = `id, at, airframe_id, part_id, rule_id, action, work, performed_by, approved_by, position,
	removed_part_id, fitted_part_id, resolves::text[], corrects_id, airframe_hours, certificate_number,
	certificate_kind, return_to_service, clears::text[], software_from, software_to, notice_id, created_at`

func scanWork(row pgx.Row) (*fleet.WorkRecord, error) {
	var w fleet.WorkRecord
	err := row.Scan(&w.ID, &w.At, &w.AirframeID, &w.PartID, &w.RuleID, &w.Action, &w.Work, &w.PerformedBy,
		&w.ApprovedBy, &w.Position, &w.RemovedPartID, &w.FittedPartID, &w.Resolves, &w.CorrectsID, &w.AirframeHours,
		&w.CertificateNumber, &w.CertificateKind, &w.ReturnToService, &w.Clears, &w.SoftwareFrom, &w.SoftwareTo, &w.NoticeID, &w.CreatedAt)
	if err != nil {
		return nil, err
	}
	w.Discrepancies = []*fleet.Discrepancy{}
	return &w, nil
}

// CreateWorkRecord records maintenance work in one transaction with its
// effects: a replacement removes the old part and fits the new one at the
// same position and moment; a retirement retires the part (removing it if
// fitted); listed events are resolved by this record. The airframe's total
// time in service at the entry is recorded with it (14 CFR 43.11).
func (db *DB) CreateWorkRecord(ctx context.Context, w *fleet.WorkRecord) (*fleet.WorkRecord, error) {
	if w.At.IsZero() {
		w.At = db.now()
	}
	if err := w.Validate(); err != nil {
		return nil, err
	}
	if err := fleet.CheckTime("at", w.At, db.now()); err != nil {
		return nil, err
	}
	if w.Resolves == nil {
		w.Resolves = []string{}
	}
	if w.Clears == nil {
		w.Clears = []string{}
	}
	var out *fleet.WorkRecord
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		id := newID()
		if err := applyWork(ctx, tx, w); err != nil {
			return err
		}
		if w.AirframeID != nil {
			var hours float64
			if err := tx.QueryRow(ctx, `
				SELECT coalesce(sum(extract(epoch FROM landing_at - takeoff_at)) / 3600, 0)
				FROM flights WHERE airframe_id = $1 AND takeoff_at <= $2`, *w.AirframeID, w.At).Scan(&hours); err != nil {
				return err
			}
			w.AirframeHours = &hours
		}
		var err error
		out, err = scanWork(tx.QueryRow(ctx, `
			INSERT INTO work_records (id, at, airframe_id, part_id, rule_id, action, work, performed_by, approved_by,
				position, removed_part_id, fitted_part_id, resolves, corrects_id, airframe_hours, certificate_number,
				certificate_kind, return_to_service, clears, software_from, software_to, notice_id)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13::uuid[], $14, $15, $16, $17, $18, $19::uuid[],
				$20, $21, $22) RETURNING `+workCols,
			id, w.At, w.AirframeID, w.PartID, w.RuleID, w.Action, w.Work, w.PerformedBy, w.ApprovedBy,
			w.Position, w.RemovedPartID, w.FittedPartID, w.Resolves, w.CorrectsID, w.AirframeHours, w.CertificateNumber,
			w.CertificateKind, w.ReturnToService, w.Clears, w.SoftwareFrom, w.SoftwareTo, w.NoticeID))
		if err != nil {
			return err
		}
		if err := recordSignOff(ctx, tx, w, out); err != nil {
			return err
		}
		if w.Action == "update" {
			if err := installSoftware(ctx, tx, out); err != nil {
				return err
			}
		}
		for i, ev := range w.Resolves {
			tag, err := tx.Exec(ctx, `
				UPDATE events SET resolved_at = $2, resolution = $3, resolved_by = $4, version = version + 1
				WHERE id = $1 AND resolved_at IS NULL`, ev, w.At, "work record "+out.ID+": "+w.Work, w.PerformedBy)
			if err != nil {
				return err
			}
			if tag.RowsAffected() != 1 {
				return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: fmt.Sprintf("resolves[%d]", i), Message: "no open event with this id"}
			}
		}
		return audit(ctx, tx, "work_record", out.ID, nil, out)
	})
	return out, err
}

// applyWork performs a record's fit changes and fills in what they imply.
func applyWork(ctx context.Context, tx pgx.Tx, w *fleet.WorkRecord) error {
	switch w.Action {
	case "replace":
		var f fleet.Fit
		err := tx.QueryRow(ctx, `
			SELECT airframe_id, position, lower(during) FROM fits WHERE part_id = $1 AND upper_inf(during) FOR UPDATE`,
			*w.RemovedPartID).Scan(&f.AirframeID, &f.Position, &f.FittedAt)
		if err == pgx.ErrNoRows {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "removed_part_id", Message: "the part is not fitted"}
		} else if err != nil {
			return err
		}
		if w.AirframeID != nil && *w.AirframeID != f.AirframeID {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "removed_part_id", Message: "the part is fitted on another airframe"}
		}
		if !w.At.After(f.FittedAt) {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "at", Message: "must be after the removed part was fitted"}
		}
		w.AirframeID, w.Position = &f.AirframeID, &f.Position
		if w.PartID == nil {
			w.PartID = w.RemovedPartID
		}
		if _, err := closeFits(ctx, tx, fitsOfPart, *w.RemovedPartID, w.At, "replaced (work record)"); err != nil {
			return err
		}
		a, err := scanAirframe(tx.QueryRow(ctx, `SELECT `+airframeCols+` FROM airframes WHERE id = $1`, f.AirframeID))
		if err != nil {
			return err
		}
		p, err := scanPart(tx.QueryRow(ctx, `SELECT `+partCols+` FROM parts WHERE id = $1`, *w.FittedPartID))
		if err == pgx.ErrNoRows {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "fitted_part_id", Message: "unknown part"}
		} else if err != nil {
			return err
		}
		r := FitRequest{PartID: p.ID, Position: f.Position, At: w.At}
		if err := checkFittable(ctx, tx, a, p, &r); err != nil {
			if fe, ok := err.(*fleet.Error); ok && fe.Field == "part_id" {
				fe.Field = "fitted_part_id"
			}
			return err
		}
		fit, err := scanFit(tx.QueryRow(ctx, `
			INSERT INTO fits (id, part_id, airframe_id, kind, position, during)
			VALUES ($1, $2, $3, $4, $5, tstzrange($6, NULL, '[)')) RETURNING `+fitCols,
			newID(), p.ID, a.ID, p.Kind, f.Position, w.At))
		if err != nil {
			return err
		}
		if err := audit(ctx, tx, "fit", fit.ID, nil, fit); err != nil {
			return err
		}
		return syncPartStatus(ctx, tx, p.ID)
	case "update":
		return checkUpdate(ctx, tx, w)
	case "retire":
		if w.PartID == nil {
			return fleet.FieldError("part_id", "say which part is retired")
		}
		if _, err := closeFits(ctx, tx, fitsOfPart, *w.PartID, w.At, "retired (work record)"); err != nil {
			return err
		}
		before, err := scanPart(tx.QueryRow(ctx, `SELECT `+partCols+` FROM parts WHERE id = $1 FOR UPDATE`, *w.PartID))
		if err == pgx.ErrNoRows {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "part_id", Message: "unknown part"}
		} else if err != nil {
			return err
		}
		after, err := scanPart(tx.QueryRow(ctx, `
			UPDATE parts SET status = 'retired', retired_reason = $2, version = version + 1, updated_at = now()
			WHERE id = $1 RETURNING `+partCols, *w.PartID, w.Work))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "part", after.ID, before, after)
	}
	return nil
}

// WorkFilter narrows the work-record listing.
type WorkFilter struct {
	AirframeID, PartID, RuleID string
}

// WorkRecords lists work records in id order, one keyset page.
func (db *DB) WorkRecords(ctx context.Context, f WorkFilter, p Page) ([]*fleet.WorkRecord, string, error) {
	after, err := p.afterID()
	if err != nil {
		return nil, "", err
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+workCols+` FROM work_records
		WHERE ($1::uuid IS NULL OR id > $1) AND ($2::uuid IS NULL OR airframe_id = $2)
		  AND ($3::uuid IS NULL OR part_id = $3 OR removed_part_id = $3 OR fitted_part_id = $3)
		  AND ($4::uuid IS NULL OR rule_id = $4)
		ORDER BY id LIMIT $5`, after, nilIfEmpty(f.AirframeID), nilIfEmpty(f.PartID), nilIfEmpty(f.RuleID), p.Limit+1)
	if err != nil {
		return nil, "", translate(err)
	}
	list, err := collect(rows, scanWork)
	if err != nil {
		return nil, "", err
	}
	if err := db.attachDiscrepancies(ctx, list); err != nil {
		return nil, "", err
	}
	return page(list, p.Limit, func(w *fleet.WorkRecord) string { return w.ID })
}
