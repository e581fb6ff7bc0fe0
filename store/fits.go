package store

import (
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// FitRequest fits a part at a place on an airframe from At on.
type FitRequest struct {
	PartID   string
	Position string
	At       time.Time
}

// RemovalRequest ends a part's current fit at At.
type RemovalRequest struct {
	PartID string
	At     time.Time
	Reason string
}

const fitCols = `id, part_id, airframe_id, kind, position, lower(during), upper(during), removal_reason`

func scanFit(row pgx.Row) (*fleet.Fit, error) {
	var f fleet.Fit
	err := row.Scan(&f.ID, &f.PartID, &f.AirframeID, &f.Kind, &f.Position, &f.FittedAt, &f.RemovedAt, &f.RemovalReason)
	return &f, err
}

// Fit fits a part. The exclusion constraints decide overlaps: a part fitted
// elsewhere, or a place already taken, over an overlapping time is a conflict.
func (db *DB) Fit(ctx context.Context, airframeID string, r FitRequest) (*fleet.Fit, error) {
	if r.At.IsZero() {
		r.At = db.now()
	}
	if err := fleet.CheckTime("at", r.At, db.now()); err != nil {
		return nil, err
	}
	var out *fleet.Fit
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		a, err := scanAirframe(tx.QueryRow(ctx, `SELECT `+airframeCols+` FROM airframes WHERE id = $1`, airframeID))
		if err != nil {
			return translateNotFound(err, "airframe")
		}
		if a.RetiredAt != nil {
			return fleet.Errorf(fleet.ECONFLICT, "airframe %s is retired", a.Code)
		}
		p, err := scanPart(tx.QueryRow(ctx, `SELECT `+partCols+` FROM parts WHERE id = $1`, r.PartID))
		if err != nil {
			if err == pgx.ErrNoRows {
				return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "part_id", Message: "unknown part"}
			}
			return err
		}
		if err := checkFittable(ctx, tx, a, p, &r); err != nil {
			return err
		}
		out, err = scanFit(tx.QueryRow(ctx, `
			INSERT INTO fits (id, part_id, airframe_id, kind, position, during)
			VALUES ($1, $2, $3, $4, $5, tstzrange($6, NULL, '[)'))
			RETURNING `+fitCols, newID(), p.ID, a.ID, p.Kind, r.Position, r.At))
		if err != nil {
			return err
		}
		if err := syncPartStatus(ctx, tx, p.ID); err != nil {
			return err
		}
		return audit(ctx, tx, "fit", out.ID, nil, out)
	})
	return out, err
}

// checkFittable applies the rules the database cannot: the part's kind and
// state, the position's existence and rotation.
func checkFittable(ctx context.Context, tx pgx.Tx, a *fleet.Airframe, p *fleet.Part, r *FitRequest) error {
	switch p.Status {
	case fleet.PartRetired, fleet.PartQuarantine:
		return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "part_id",
			Message: fmt.Sprintf("part %s is %s and cannot be fitted", p.Serial, p.Status)}
	}
	if p.Kind == fleet.KindPack {
		return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "part_id",
			Message: "packs are not fitted; list them on each flight"}
	}
	if !p.Kind.AtRotor() {
		if r.Position == "" {
			r.Position = string(p.Kind)
		}
		if !fleet.ValidLabel(r.Position) {
			return fleet.FieldError("position", "must be 1-32 lower-case letters, digits, '_' or '-'")
		}
		return nil
	}
	l, err := layoutTx(ctx, tx, a.Layout)
	if err != nil {
		return err
	}
	pos, ok := l.Position(r.Position)
	if !ok {
		return fleet.FieldError("position", "layout %s has no position %q", l.Name, r.Position)
	}
	if p.Kind == fleet.KindMotor || p.Kind == fleet.KindPropeller {
		if rot := p.Rotation(); rot != pos.Rotation {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "position",
				Message: fmt.Sprintf("%s %s spins %s but position %s turns %s", p.Kind, p.Serial, rot, pos.Label, pos.Rotation)}
		}
	}
	return nil
}

// Remove ends the part's open fit on the airframe at r.At.
func (db *DB) Remove(ctx context.Context, airframeID string, r RemovalRequest) (*fleet.Fit, error) {
	if r.At.IsZero() {
		r.At = db.now()
	}
	if err := fleet.CheckTime("at", r.At, db.now()); err != nil {
		return nil, err
	}
	var out *fleet.Fit
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanFit(tx.QueryRow(ctx, `
			SELECT `+fitCols+` FROM fits
			WHERE airframe_id = $1 AND part_id = $2 AND upper_inf(during) FOR UPDATE`, airframeID, r.PartID))
		if err == pgx.ErrNoRows {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "part_id", Message: "the part is not fitted on this airframe"}
		} else if err != nil {
			return err
		}
		if !r.At.After(before.FittedAt) {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "at", Message: "must be after the part was fitted"}
		}
		if err := checkLen("reason", r.Reason, 500); err != nil {
			return err
		}
		var reason *string
		if r.Reason != "" {
			reason = &r.Reason
		}
		out, err = scanFit(tx.QueryRow(ctx, `
			UPDATE fits SET during = tstzrange(lower(during), $2, '[)'), removal_reason = $3
			WHERE id = $1 RETURNING `+fitCols, before.ID, r.At, reason))
		if err != nil {
			return err
		}
		if err := syncPartStatus(ctx, tx, r.PartID); err != nil {
			return err
		}
		return audit(ctx, tx, "fit", out.ID, before, out)
	})
	return out, err
}

// openFitsOf selects the open fits closeFits ends: an airframe's or a part's.
type openFitsOf string

const (
	fitsOfAirframe openFitsOf = `SELECT ` + fitCols + ` FROM fits WHERE airframe_id = $1 AND upper_inf(during) ORDER BY id FOR UPDATE`
	fitsOfPart     openFitsOf = `SELECT ` + fitCols + ` FROM fits WHERE part_id = $1 AND upper_inf(during) ORDER BY id FOR UPDATE`
)

// closeFits ends the open fits of an airframe or part at `at` (at least a
// second after each began) with a removal reason, each with its audit row,
// and brings the parts' status along. Retirement and replacement remove
// parts as surely as a removal does, so they leave the same record.
func closeFits(ctx context.Context, tx pgx.Tx, of openFitsOf, id string, at time.Time, reason string) ([]*fleet.Fit, error) {
	rows, err := tx.Query(ctx, string(of), id)
	if err != nil {
		return nil, err
	}
	open, err := collect(rows, scanFit)
	if err != nil {
		return nil, err
	}
	closed := make([]*fleet.Fit, 0, len(open))
	for _, before := range open {
		after, err := scanFit(tx.QueryRow(ctx, `
			UPDATE fits SET during = tstzrange(lower(during), greatest($2, lower(during) + interval '1 second'), '[)'),
				removal_reason = $3
			WHERE id = $1 RETURNING `+fitCols, before.ID, at, reason))
		if err != nil {
			return nil, err
		}
		if err := audit(ctx, tx, "fit", after.ID, before, after); err != nil {
			return nil, err
		}
		if err := syncPartStatus(ctx, tx, after.PartID); err != nil {
			return nil, err
		}
		closed = append(closed, after)
	}
	return closed, nil
}

// Fitment is what an airframe carried at a moment.
type Fitment struct {
	AirframeID string             `json:"airframe_id"`
	At         time.Time          `json:"at"`
	Parts      []fleet.FittedPart `json:"parts"`
	Empty      []EmptyPlace       `json:"empty"`
}

// EmptyPlace is a rotor position lacking a motor or propeller.
type EmptyPlace struct {
	Position string         `json:"position"`
	Kind     fleet.PartKind `json:"kind"`
}

// FitmentSQL is the one query behind Fitment ($1 airframe, $2 moment):
// the layout's positions and the parts fitted then, as JSON. Exported so
// benchmarks can run the same SQL directly as their floor.
const FitmentSQL = `
		SELECT l.positions, coalesce((
			SELECT json_agg(json_build_object('position', f.position, 'kind', f.kind, 'part_id', p.id,
				'serial', p.serial, 'part_number', p.part_number, 'lot', p.lot, 'fitted_at', lower(f.during))
				ORDER BY f.kind, f.position)
			FROM fits f JOIN parts p ON p.id = f.part_id
			WHERE f.airframe_id = a.id AND f.during @> $2::timestamptz), '[]')
		FROM airframes a JOIN layouts l ON l.name = a.layout WHERE a.id = $1`

// Fitment returns the parts fitted on the airframe at the moment at, in one
// round trip (the layout for the empty places comes with it).
func (db *DB) Fitment(ctx context.Context, airframeID string, at time.Time) (*Fitment, error) {
	var positions, parts []byte
	err := db.pool.QueryRow(ctx, FitmentSQL, airframeID, at).Scan(&positions, &parts)
	if err != nil {
		return nil, translateNotFound(err, "airframe")
	}
	l := &fleet.Layout{}
	if err := json.Unmarshal(positions, &l.Positions); err != nil {
		return nil, err
	}
	fm := &Fitment{AirframeID: airframeID, At: at.UTC(), Parts: []fleet.FittedPart{}}
	if err := json.Unmarshal(parts, &fm.Parts); err != nil {
		return nil, err
	}
	fm.Empty = EmptyPlaces(l, fm.Parts)
	return fm, nil
}

func scanFittedPart(r pgx.Row) (fleet.FittedPart, error) {
	var f fleet.FittedPart
	err := r.Scan(&f.Position, &f.Kind, &f.PartID, &f.Serial, &f.PartNumber, &f.Lot, &f.FittedAt)
	return f, err
}

// EmptyPlaces lists the rotor positions without a motor or a propeller.
func EmptyPlaces(l *fleet.Layout, parts []fleet.FittedPart) []EmptyPlace {
	have := map[string]bool{}
	for _, p := range parts {
		have[string(p.Kind)+"/"+p.Position] = true
	}
	out := []EmptyPlace{}
	for _, pos := range l.Positions {
		for _, k := range []fleet.PartKind{fleet.KindMotor, fleet.KindPropeller} {
			if !have[string(k)+"/"+pos.Label] {
				out = append(out, EmptyPlace{Position: pos.Label, Kind: k})
			}
		}
	}
	return out
}
