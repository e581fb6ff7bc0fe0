package store

import (
	"context"
	"time"
)

// OpsFigures are the figures the metrics read from the database: the
// notification outbox, the due list by status and the register's airframes
// by status.
type OpsFigures struct {
	OutboxPending int64 // undelivered rows still to be tried
	OutboxGivenUp int64 // undelivered rows given up after the most attempts
	// OutboxOldestPending is the age of the oldest row still to be tried;
	// zero when none is.
	OutboxOldestPending        time.Duration
	DueOK, DueSoon, DueOverdue int64
	// Airframes by the status the API reports (fleet.Airframe.DeriveStatus):
	// retired; grounded by a hold or an overdue grounding rule; active.
	AirframesActive, AirframesGrounded, AirframesRetired int64
}

// opsFiguresSQL is one statement of three aggregates. The outbox part reads
// only undelivered rows (the partial index outbox_due covers them); the due
// list and the register are counted whole, some 16 one-row reads' time at
// 500 airframes (BenchmarkOpsFigures in api), which is why the metrics
// cache the result.
const opsFiguresSQL = `
WITH o AS (
	SELECT count(*) FILTER (WHERE next_attempt_at IS NOT NULL) AS pending,
	       count(*) FILTER (WHERE next_attempt_at IS NULL) AS given_up,
	       coalesce(extract(epoch FROM now() - min(created_at) FILTER (WHERE next_attempt_at IS NOT NULL)), 0)::float8 AS oldest
	FROM outbox WHERE delivered_at IS NULL),
d AS (
	SELECT count(*) FILTER (WHERE status = 'ok') AS ok,
	       count(*) FILTER (WHERE status = 'due_soon') AS soon,
	       count(*) FILTER (WHERE status = 'overdue') AS overdue
	FROM due_items),
a AS (
	SELECT count(*) FILTER (WHERE retired_at IS NOT NULL) AS retired,
	       count(*) FILTER (WHERE retired_at IS NULL AND (hold_reason IS NOT NULL OR ` + groundedByRule + `)) AS grounded,
	       count(*) FILTER (WHERE retired_at IS NULL) AS in_service
	FROM airframes)
SELECT o.pending, o.given_up, o.oldest, d.ok, d.soon, d.overdue, a.in_service - a.grounded, a.grounded, a.retired
FROM o, d, a`

// OpsFigures reads the figures in one statement.
func (db *DB) OpsFigures(ctx context.Context) (OpsFigures, error) {
	var f OpsFigures
	var oldest float64
	err := db.pool.QueryRow(ctx, opsFiguresSQL).Scan(&f.OutboxPending, &f.OutboxGivenUp, &oldest,
		&f.DueOK, &f.DueSoon, &f.DueOverdue, &f.AirframesActive, &f.AirframesGrounded, &f.AirframesRetired)
	if err != nil {
		return OpsFigures{}, translate(err)
	}
	f.OutboxOldestPending = time.Duration(oldest * float64(time.Second))
	return f, nil
}
