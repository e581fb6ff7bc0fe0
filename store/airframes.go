package store

import (
	"context"
	"encoding/json"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// airframeCols ends with whether an overdue grounding rule grounds the
// airframe (its status is derived from that and the manual hold).
const airframeCols = `id, code, name, model, layout, cells_s, packs_per_flight, empty_mass_g, mtow_g,
	rotor_diameter_mm, hold_reason, retired_at, notes, version, created_at, updated_at,
	` + groundedByRule

const groundedByRule = `EXISTS (SELECT 1 FROM due_items d
	WHERE d.airframe_id = airframes.id AND d.status = 'overdue' AND d.grounding)`

func scanAirframe(row pgx.Row) (*fleet.Airframe, error) {
	var a fleet.Airframe
	err := row.Scan(&a.ID, &a.Code, &a.Name, &a.Model, &a.Layout, &a.CellsS, &a.PacksPerFlight,
		&a.EmptyMassG, &a.MTOWG, &a.RotorDiameterMM, &a.HoldReason, &a.RetiredAt, &a.Notes,
		&a.Version, &a.CreatedAt, &a.UpdatedAt, &a.GroundedByRule)
	if err != nil {
		return nil, err
	}
	a.DeriveStatus()
	return &a, nil
}

// CreateAirframe inserts an airframe.
func (db *DB) CreateAirframe(ctx context.Context, a *fleet.Airframe) (*fleet.Airframe, error) {
	if err := a.Validate(); err != nil {
		return nil, err
	}
	var out *fleet.Airframe
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		var err error
		out, err = scanAirframe(tx.QueryRow(ctx, `
			INSERT INTO airframes (id, code, name, model, layout, cells_s, packs_per_flight, empty_mass_g,
				mtow_g, rotor_diameter_mm, hold_reason, notes)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12)
			RETURNING `+airframeCols,
			newID(), a.Code, a.Name, a.Model, a.Layout, a.CellsS, a.PacksPerFlight, a.EmptyMassG,
			a.MTOWG, a.RotorDiameterMM, a.HoldReason, a.Notes))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "airframe", out.ID, nil, out)
	})
	return out, err
}

// Airframe returns one airframe.
func (db *DB) Airframe(ctx context.Context, id string) (*fleet.Airframe, error) {
	a, err := scanAirframe(db.pool.QueryRow(ctx, `SELECT `+airframeCols+` FROM airframes WHERE id = $1`, id))
	if err != nil {
		return nil, translateNotFound(err, "airframe")
	}
	return a, nil
}

// AirframeByCode returns the airframe with a tail code.
func (db *DB) AirframeByCode(ctx context.Context, code string) (*fleet.Airframe, error) {
	a, err := scanAirframe(db.pool.QueryRow(ctx, `SELECT `+airframeCols+` FROM airframes WHERE code = $1`, code))
	if err != nil {
		return nil, translateNotFound(err, "airframe")
	}
	return a, nil
}

// AirframeFilter narrows a listing.
type AirframeFilter struct {
	Status string
	Model  string
	Layout string
}

// Airframes lists airframes in id order, one keyset page.
func (db *DB) Airframes(ctx context.Context, f AirframeFilter, p Page) ([]*fleet.Airframe, string, error) {
	after, err := p.afterID()
	if err != nil {
		return nil, "", err
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+airframeCols+` FROM airframes
		WHERE ($1::uuid IS NULL OR id > $1)
		  AND ($2 = '' OR model = $2)
		  AND ($3 = '' OR layout = $3)
		  AND ($4 = '' OR CASE WHEN retired_at IS NOT NULL THEN 'retired'
		                       WHEN hold_reason IS NOT NULL OR `+groundedByRule+` THEN 'grounded' ELSE 'active' END = $4)
		ORDER BY id LIMIT $5`, after, f.Model, f.Layout, f.Status, p.Limit+1)
	if err != nil {
		return nil, "", translate(err)
	}
	list, err := collect(rows, scanAirframe)
	if err != nil {
		return nil, "", err
	}
	return page(list, p.Limit, func(a *fleet.Airframe) string { return a.ID })
}

// UpdateAirframe applies fn to the airframe at version under a row lock and
// writes it back. A stale version yields EPRECONDITION.
func (db *DB) UpdateAirframe(ctx context.Context, id string, version int, fn func(*fleet.Airframe) error) (*fleet.Airframe, error) {
	var out *fleet.Airframe
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanAirframe(tx.QueryRow(ctx, `SELECT `+airframeCols+` FROM airframes WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "airframe")
		}
		if before.Version != version {
			return versionMismatch()
		}
		if before.RetiredAt != nil {
			return fleet.Errorf(fleet.ECONFLICT, "airframe %s is retired", before.Code)
		}
		a := clone(before)
		if err := fn(a); err != nil {
			return err
		}
		if err := a.Validate(); err != nil {
			return err
		}
		out, err = scanAirframe(tx.QueryRow(ctx, `
			UPDATE airframes SET code = $2, name = $3, model = $4, layout = $5, cells_s = $6,
				packs_per_flight = $7, empty_mass_g = $8, mtow_g = $9, rotor_diameter_mm = $10,
				hold_reason = $11, notes = $12, version = version + 1, updated_at = now()
			WHERE id = $1 RETURNING `+airframeCols,
			id, a.Code, a.Name, a.Model, a.Layout, a.CellsS, a.PacksPerFlight, a.EmptyMassG, a.MTOWG,
			a.RotorDiameterMM, a.HoldReason, a.Notes))
		if err != nil {
			return err
		}
		if out.Layout != before.Layout {
			if err := checkNoCurrentFits(ctx, tx, id); err != nil {
				return err
			}
		}
		return audit(ctx, tx, "airframe", id, before, out)
	})
	return out, err
}

// RetireAirframe retires an airframe: its records stay (they must be kept
// with the aircraft), every part still fitted is removed at the same moment.
func (db *DB) RetireAirframe(ctx context.Context, id string, version int) (*fleet.Airframe, error) {
	var out *fleet.Airframe
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanAirframe(tx.QueryRow(ctx, `SELECT `+airframeCols+` FROM airframes WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "airframe")
		}
		if before.Version != version {
			return versionMismatch()
		}
		if before.RetiredAt != nil {
			return fleet.Errorf(fleet.ECONFLICT, "airframe %s is already retired", before.Code)
		}
		now := db.now()
		if _, err := closeFits(ctx, tx, fitsOfAirframe, id, now, "airframe retired"); err != nil {
			return err
		}
		out, err = scanAirframe(tx.QueryRow(ctx, `
			UPDATE airframes SET retired_at = $2, version = version + 1, updated_at = now()
			WHERE id = $1 RETURNING `+airframeCols, id, now))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "airframe", id, before, out)
	})
	return out, err
}

func checkNoCurrentFits(ctx context.Context, tx pgx.Tx, airframeID string) error {
	var n int
	if err := tx.QueryRow(ctx, `SELECT count(*) FROM fits WHERE airframe_id = $1 AND upper_inf(during)`, airframeID).Scan(&n); err != nil {
		return err
	}
	if n > 0 {
		return &fleet.Error{Code: fleet.ECONFLICT, Field: "layout", Message: "remove the fitted parts before changing the layout"}
	}
	return nil
}

// Layout returns a layout by name.
func (db *DB) Layout(ctx context.Context, name string) (*fleet.Layout, error) {
	return layoutTx(ctx, db.pool, name)
}

type querier interface {
	QueryRow(ctx context.Context, sql string, args ...any) pgx.Row
}

func layoutTx(ctx context.Context, q querier, name string) (*fleet.Layout, error) {
	var l fleet.Layout
	var raw []byte
	err := q.QueryRow(ctx, `SELECT name, builtin, positions FROM layouts WHERE name = $1`, name).Scan(&l.Name, &l.Builtin, &raw)
	if err != nil {
		return nil, translateNotFound(err, "layout")
	}
	if err := json.Unmarshal(raw, &l.Positions); err != nil {
		return nil, err
	}
	return &l, nil
}

// Layouts lists every layout.
func (db *DB) Layouts(ctx context.Context) ([]*fleet.Layout, error) {
	rows, err := db.pool.Query(ctx, `SELECT name, builtin, positions FROM layouts ORDER BY name`)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (*fleet.Layout, error) {
		var l fleet.Layout
		var raw []byte
		if err := r.Scan(&l.Name, &l.Builtin, &raw); err != nil {
			return nil, err
		}
		return &l, json.Unmarshal(raw, &l.Positions)
	})
}

// CreateLayout adds a user-defined layout.
func (db *DB) CreateLayout(ctx context.Context, l *fleet.Layout) (*fleet.Layout, error) {
	if err := l.Validate(); err != nil {
		return nil, err
	}
	l.Builtin = false
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		pos, err := json.Marshal(l.Positions)
		if err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, `INSERT INTO layouts (name, positions) VALUES ($1, $2)`, l.Name, pos); err != nil {
			return err
		}
		return audit(ctx, tx, "layout", l.Name, nil, l)
	})
	if err != nil {
		return nil, err
	}
	return l, nil
}

// collect scans every row with scan.
func collect[T any](rows pgx.Rows, scan func(pgx.Row) (T, error)) ([]T, error) {
	defer rows.Close()
	var out []T
	for rows.Next() {
		v, err := scan(rows)
		if err != nil {
			return nil, translate(err)
		}
		out = append(out, v)
	}
	return out, translate(rows.Err())
}

// page trims a limit+1 fetch to limit and returns the next cursor.
func page[T any](list []T, limit int, id func(T) string) ([]T, string, error) {
	ids := make([]string, len(list))
	for i, v := range list {
		ids[i] = id(v)
	}
	next := nextCursor(ids, limit)
	if len(list) > limit {
		list = list[:limit]
	}
	return list, next, nil
}

func translateNotFound(err error, what string) error {
	if err == pgx.ErrNoRows {
		return notFound(what)
	}
	return translate(err)
}
