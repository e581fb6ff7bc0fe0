package store

import (
	"context"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

const ruleCols = `id, name, description, applies_to, part_number, model, flight_hours, flights, days, revolutions,
	bearing_pct, cycles, soh_below_pct, ir_rise_pct, efficiency_rise_pct, vibration_rise_pct, on_events, warn_at,
	grounding, action, enabled, version, created_at, updated_at`

func scanRule(row pgx.Row) (*fleet.ServiceRule, error) {
	var r fleet.ServiceRule
	err := row.Scan(&r.ID, &r.Name, &r.Description, &r.AppliesTo, &r.PartNumber, &r.Model, &r.FlightHours, &r.Flights,
		&r.Days, &r.Revolutions, &r.BearingPct, &r.Cycles, &r.SoHBelowPct, &r.IRRisePct, &r.EfficiencyRisePct,
		&r.VibrationRisePct, &r.OnEvents, &r.WarnAt, &r.Grounding, &r.Action, &r.Enabled, &r.Version, &r.CreatedAt, &r.UpdatedAt)
	if err != nil {
		return nil, err
	}
	return &r, nil
}

func ruleArgs(r *fleet.ServiceRule) []any {
	if r.OnEvents == nil {
		r.OnEvents = []string{}
	}
	return []any{r.Name, r.Description, r.AppliesTo, r.PartNumber, r.Model, r.FlightHours, r.Flights, r.Days,
		r.Revolutions, r.BearingPct, r.Cycles, r.SoHBelowPct, r.IRRisePct, r.EfficiencyRisePct, r.VibrationRisePct,
		r.OnEvents, r.WarnAt, r.Grounding, r.Action, r.Enabled}
}

// CreateRule adds a service rule.
func (db *DB) CreateRule(ctx context.Context, r *fleet.ServiceRule) (*fleet.ServiceRule, error) {
	if err := r.Validate(); err != nil {
		return nil, err
	}
	var out *fleet.ServiceRule
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		var err error
		out, err = scanRule(tx.QueryRow(ctx, `
			INSERT INTO service_rules (id, name, description, applies_to, part_number, model, flight_hours, flights,
				days, revolutions, bearing_pct, cycles, soh_below_pct, ir_rise_pct, efficiency_rise_pct,
				vibration_rise_pct, on_events, warn_at, grounding, action, enabled)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18, $19, $20, $21)
			RETURNING `+ruleCols, append([]any{newID()}, ruleArgs(r)...)...))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "service_rule", out.ID, nil, out)
	})
	return out, err
}

// Rule returns one rule.
func (db *DB) Rule(ctx context.Context, id string) (*fleet.ServiceRule, error) {
	r, err := scanRule(db.pool.QueryRow(ctx, `SELECT `+ruleCols+` FROM service_rules WHERE id = $1`, id))
	if err != nil {
		return nil, translateNotFound(err, "service rule")
	}
	return r, nil
}

const rulesSQL = `SELECT ` + ruleCols + ` FROM service_rules ORDER BY name`

// Rules lists every rule by name.
func (db *DB) Rules(ctx context.Context) ([]*fleet.ServiceRule, error) {
	rows, err := db.pool.Query(ctx, rulesSQL)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanRule)
}

// UpdateRule applies fn to the rule at version under a row lock.
func (db *DB) UpdateRule(ctx context.Context, id string, version int, fn func(*fleet.ServiceRule) error) (*fleet.ServiceRule, error) {
	var out *fleet.ServiceRule
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanRule(tx.QueryRow(ctx, `SELECT `+ruleCols+` FROM service_rules WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "service rule")
		}
		if before.Version != version {
			return versionMismatch()
		}
		r := clone(before)
		if err := fn(r); err != nil {
			return err
		}
		if err := r.Validate(); err != nil {
			return err
		}
		out, err = scanRule(tx.QueryRow(ctx, `
			UPDATE service_rules SET name = $2, description = $3, applies_to = $4, part_number = $5, model = $6,
				flight_hours = $7, flights = $8, days = $9, revolutions = $10, bearing_pct = $11, cycles = $12,
				soh_below_pct = $13, ir_rise_pct = $14, efficiency_rise_pct = $15, vibration_rise_pct = $16,
				on_events = $17, warn_at = $18, grounding = $19, action = $20, enabled = $21,
				version = version + 1, updated_at = now()
			WHERE id = $1 RETURNING `+ruleCols, append([]any{id}, ruleArgs(r)...)...))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "service_rule", id, before, out)
	})
	return out, err
}

// DeleteRule removes a rule that no work record refers to; otherwise it must
// be disabled instead (records keep their rule).
func (db *DB) DeleteRule(ctx context.Context, id string, version int) error {
	return db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanRule(tx.QueryRow(ctx, `SELECT `+ruleCols+` FROM service_rules WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "service rule")
		}
		if before.Version != version {
			return versionMismatch()
		}
		var used bool
		if err := tx.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM work_records WHERE rule_id = $1)`, id).Scan(&used); err != nil {
			return err
		}
		if used {
			return &fleet.Error{Code: fleet.ECONFLICT, Field: "id", Message: "work records refer to this rule: disable it (enabled: false) instead"}
		}
		if _, err := tx.Exec(ctx, `DELETE FROM service_rules WHERE id = $1`, id); err != nil {
			return err
		}
		return audit(ctx, tx, "service_rule", id, before, nil)
	})
}
