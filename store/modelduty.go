package store

import (
	"context"
	"errors"
	"time"

	"github.com/jackc/pgx/v5"
)

// StoredModelDuty returns a motor model's reference duty as SaveModelDuty
// last stored it, when that was at or after notBefore (found false
// otherwise); ok is false when what was stored is that the model had none.
func (db *DB) StoredModelDuty(ctx context.Context, partNumber string, notBefore time.Time) (rpm, thrustN float64, ok, found bool, err error) {
	var r, t *float64
	err = db.pool.QueryRow(ctx, `SELECT rpm, thrust_n FROM model_duty WHERE part_number = $1 AND computed_at >= $2`,
		partNumber, notBefore).Scan(&r, &t)
	if errors.Is(err, pgx.ErrNoRows) {
		return 0, 0, false, false, nil
	}
	if err != nil {
		return 0, 0, false, false, translate(err)
	}
	if r == nil || t == nil {
		return 0, 0, false, true, nil
	}
	return *r, *t, true, true, nil
}

// SaveModelDuty stores a motor model's reference duty (ModelDuty) as
// computed at the moment at; ok false stores that it had none.
func (db *DB) SaveModelDuty(ctx context.Context, partNumber string, rpm, thrustN float64, ok bool, at time.Time) error {
	var r, t *float64
	if ok {
		r, t = &rpm, &thrustN
	}
	_, err := db.pool.Exec(ctx, `
		INSERT INTO model_duty (part_number, rpm, thrust_n, computed_at) VALUES ($1, $2, $3, $4)
		ON CONFLICT (part_number) DO UPDATE SET rpm = EXCLUDED.rpm, thrust_n = EXCLUDED.thrust_n,
			computed_at = EXCLUDED.computed_at`, partNumber, r, t, at)
	return translate(err)
}
