package store

import (
	"context"
	"errors"

	"github.com/jackc/pgx/v5"
)

// LogsToRepack lists up to limit flights whose stored log was packed fast
// at upload and waits for the repack job (flight_logs.repack).
func (db *DB) LogsToRepack(ctx context.Context, limit int) ([]string, error) {
	rows, err := db.pool.Query(ctx, `SELECT flight_id FROM flight_logs WHERE repack ORDER BY flight_id LIMIT $1`, limit)
	if err != nil {
		return nil, translate(err)
	}
	return pgx.CollectRows(rows, pgx.RowTo[string])
}

// PackedLog is a stored log as the repack job sees it: its bytes and what
// its text must be (the SHA-256 in hex and the length of the text).
type PackedLog struct {
	FlightID string
	Gz       []byte
	SHA256   string
	Bytes    int64
}

// ErrNotWaiting: the log is no longer marked for repacking (another run
// took it, or it never was).
var ErrNotWaiting = errors.New("store: the log is not waiting to be repacked")

// RepackLog rewrites one marked log with what pack makes of it, in one
// transaction that holds the row (a log another run holds is skipped:
// ErrNotWaiting), with an audit row of the stored sizes. pack must give
// back bytes of the same text; it checks that itself (ingest.Repack), and
// an error from it leaves the log as it was.
func (db *DB) RepackLog(ctx context.Context, flightID string, pack func(PackedLog) ([]byte, error)) (before, after int, err error) {
	err = db.inTx(ctx, func(tx pgx.Tx) error {
		l := PackedLog{FlightID: flightID}
		err := tx.QueryRow(ctx, `SELECT raw_gz, sha256, raw_bytes FROM flight_logs WHERE flight_id = $1 AND repack
			FOR UPDATE SKIP LOCKED`, flightID).Scan(&l.Gz, &l.SHA256, &l.Bytes)
		if err == pgx.ErrNoRows {
			return ErrNotWaiting
		} else if err != nil {
			return err
		}
		out, err := pack(l)
		if err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, `UPDATE flight_logs SET raw_gz = $2, repack = false WHERE flight_id = $1`,
			flightID, out); err != nil {
			return err
		}
		before, after = len(l.Gz), len(out)
		return audit(ctx, tx, "flight_log", flightID, map[string]any{"stored_bytes": before, "packing": "fast"},
			map[string]any{"stored_bytes": after, "packing": "repacked", "text_sha256": l.SHA256})
	})
	return before, after, translate(err)
}
