package store

import (
	"context"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

const partCols = `id, kind, serial, part_number, lot, maker, to_char(acquired_on, 'YYYY-MM-DD'), mass_g,
	status, retired_reason, specs, software_version, notes, version, created_at, updated_at`

func scanPart(row pgx.Row) (*fleet.Part, error) {
	var p fleet.Part
	err := row.Scan(&p.ID, &p.Kind, &p.Serial, &p.PartNumber, &p.Lot, &p.Maker, &p.AcquiredOn, &p.MassG,
		&p.Status, &p.RetiredReason, &p.Specs, &p.SoftwareVersion, &p.Notes, &p.Version, &p.CreatedAt, &p.UpdatedAt)
	if err != nil {
		return nil, err
	}
	return &p, nil
}

// CreatePart inserts a part in stock (or quarantine). It becomes fitted only
// by a fit.
func (db *DB) CreatePart(ctx context.Context, p *fleet.Part) (*fleet.Part, error) {
	if p.Status == "" {
		p.Status = fleet.PartStock
	}
	if p.Status == fleet.PartFitted {
		return nil, fleet.FieldError("status", "a part becomes fitted by a fit, not on creation")
	}
	if err := p.Validate(); err != nil {
		return nil, err
	}
	var out *fleet.Part
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		var err error
		out, err = scanPart(tx.QueryRow(ctx, `
			INSERT INTO parts (id, kind, serial, part_number, lot, maker, acquired_on, mass_g, status,
				retired_reason, specs, notes, software_version)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13)
			RETURNING `+partCols,
			newID(), p.Kind, p.Serial, p.PartNumber, p.Lot, p.Maker, p.AcquiredOn, p.MassG, p.Status,
			p.RetiredReason, p.Specs, p.Notes, p.SoftwareVersion))
		if err != nil {
			return err
		}
		if err := registerSoftware(ctx, tx, out); err != nil {
			return err
		}
		return audit(ctx, tx, "part", out.ID, nil, out)
	})
	return out, err
}

// Part returns one part.
func (db *DB) Part(ctx context.Context, id string) (*fleet.Part, error) {
	p, err := scanPart(db.pool.QueryRow(ctx, `SELECT `+partCols+` FROM parts WHERE id = $1`, id))
	if err != nil {
		return nil, translateNotFound(err, "part")
	}
	return p, nil
}

// PartBySerial returns the part of a kind with a serial.
func (db *DB) PartBySerial(ctx context.Context, kind fleet.PartKind, serial string) (*fleet.Part, error) {
	p, err := scanPart(db.pool.QueryRow(ctx, `SELECT `+partCols+` FROM parts WHERE kind = $1 AND serial = $2`, kind, serial))
	if err != nil {
		return nil, translateNotFound(err, "part")
	}
	return p, nil
}

// PartFilter narrows a listing.
type PartFilter struct {
	Kind       string
	Status     string
	PartNumber string
	Lot        string
	Serial     string
}

// Parts lists parts in id order, one keyset page.
func (db *DB) Parts(ctx context.Context, f PartFilter, p Page) ([]*fleet.Part, string, error) {
	after, err := p.afterID()
	if err != nil {
		return nil, "", err
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+partCols+` FROM parts
		WHERE ($1::uuid IS NULL OR id > $1)
		  AND ($2 = '' OR kind = $2) AND ($3 = '' OR status = $3)
		  AND ($4 = '' OR part_number = $4) AND ($5 = '' OR lot = $5) AND ($6 = '' OR serial = $6)
		ORDER BY id LIMIT $7`, after, f.Kind, f.Status, f.PartNumber, f.Lot, f.Serial, p.Limit+1)
	if err != nil {
		return nil, "", translate(err)
	}
	list, err := collect(rows, scanPart)
	if err != nil {
		return nil, "", err
	}
	return page(list, p.Limit, func(p *fleet.Part) string { return p.ID })
}

// UpdatePart applies fn to the part at version under a row lock. Kind and
// fitted status are not the caller's to change.
func (db *DB) UpdatePart(ctx context.Context, id string, version int, fn func(*fleet.Part) error) (*fleet.Part, error) {
	var out *fleet.Part
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanPart(tx.QueryRow(ctx, `SELECT `+partCols+` FROM parts WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "part")
		}
		if before.Version != version {
			return versionMismatch()
		}
		p := clone(before)
		if err := fn(p); err != nil {
			return err
		}
		if p.Kind != before.Kind {
			return fleet.FieldError("kind", "cannot be changed")
		}
		if (p.SoftwareVersion == nil) != (before.SoftwareVersion == nil) ||
			(p.SoftwareVersion != nil && *p.SoftwareVersion != *before.SoftwareVersion) {
			return fleet.FieldError("software_version", "changes only by a work record with action update (its history is kept)")
		}
		fitted := before.Status == fleet.PartFitted
		switch {
		case p.Status == fleet.PartFitted && !fitted:
			return fleet.FieldError("status", "a part becomes fitted by a fit")
		case fitted && p.Status != fleet.PartFitted:
			return &fleet.Error{Code: fleet.ECONFLICT, Field: "status", Message: "remove the part from its airframe first"}
		}
		if p.Status != fleet.PartRetired {
			p.RetiredReason = nil
		}
		if err := p.Validate(); err != nil {
			return err
		}
		out, err = scanPart(tx.QueryRow(ctx, `
			UPDATE parts SET serial = $2, part_number = $3, lot = $4, maker = $5, acquired_on = $6,
				mass_g = $7, status = $8, retired_reason = $9, specs = $10, notes = $11,
				version = version + 1, updated_at = now()
			WHERE id = $1 RETURNING `+partCols,
			id, p.Serial, p.PartNumber, p.Lot, p.Maker, p.AcquiredOn, p.MassG, p.Status, p.RetiredReason,
			p.Specs, p.Notes))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "part", id, before, out)
	})
	return out, err
}

// syncPartStatus sets a part fitted when it has an open fit and back to
// stock when it has none (quarantine and retired stay as they are), with an
// audit row when the status changes.
func syncPartStatus(ctx context.Context, tx pgx.Tx, partID string) error {
	before, err := scanPart(tx.QueryRow(ctx, `SELECT `+partCols+` FROM parts WHERE id = $1 FOR UPDATE`, partID))
	if err != nil {
		return err
	}
	after, err := scanPart(tx.QueryRow(ctx, `
		WITH want AS (
			SELECT CASE WHEN EXISTS (SELECT 1 FROM fits WHERE part_id = $1 AND upper_inf(during)) THEN 'fitted'
			            WHEN status = 'fitted' THEN 'stock' ELSE status END AS want_status
			FROM parts WHERE id = $1)
		UPDATE parts SET status = want.want_status, version = version + 1, updated_at = now()
		FROM want WHERE id = $1 AND parts.status <> want.want_status
		RETURNING `+partCols, partID))
	if err == pgx.ErrNoRows {
		return nil // unchanged
	} else if err != nil {
		return err
	}
	return audit(ctx, tx, "part", partID, before, after)
}
