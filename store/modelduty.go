package store

import (
	"context"
	"errors"
	"time"

	"github.com/jackc/pgx/v5"
)

// StoredModelDuty returns a motor model's reference duty as SaveModelDuty
// last stored it, when that was at or after notBefore (found false
// otherwise).
func (db *DB) StoredModelDuty(ctx context.Context, partNumber string, notBefore time.Time) (rpm, thrustN float64, found bool, err error) {
	err = db.pool.QueryRow(ctx, `SELECT rpm, thrust_n FROM model_duty WHERE part_number = $1 AND computed_at >= $2`,
		partNumber, notBefore).Scan(&rpm, &thrustN)
	if errors.Is(err, pgx.ErrNoRows) {
		return 0, 0, false, nil
	}
	if err != nil {
		return 0, 0, false, translate(err)
	}
	return rpm, thrustN, true, nil
}

// SaveModelDuty stores a motor model's reference duty (ModelDuty) as
// computed at the moment at.
func (db *DB) SaveModelDuty(ctx context.Context, partNumber string, rpm, thrustN float64, at time.Time) error {
	_, err := db.pool.Exec(ctx, `
		INSERT INTO model_duty (part_number, rpm, thrust_n, computed_at) VALUES ($1, $2, $3, $4)
		ON CONFLICT (part_number) DO UPDATE SET rpm = EXCLUDED.rpm, thrust_n = EXCLUDED.thrust_n,
			computed_at = EXCLUDED.computed_at`, partNumber, rpm, thrustN, at)
	return translate(err)
}
