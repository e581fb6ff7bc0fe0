package store

import "context"

// FlightMark counts what a refresh after a flight reads: the flights of its
// airframe and those of each pack it carried. Flights are never deleted, so
// the count only grows, and two marks that differ mean a flight was
// recorded between them (schedule.Programme.AfterFlight catches up then).
func (db *DB) FlightMark(ctx context.Context, flightID string) (int64, error) {
	var n int64
	err := db.pool.QueryRow(ctx, `
		SELECT (SELECT count(*) FROM flights o WHERE o.airframe_id = f.airframe_id)
			+ (SELECT count(*) FROM flight_packs o
				WHERE o.part_id IN (SELECT fp.part_id FROM flight_packs fp WHERE fp.flight_id = f.id))
		FROM flights f WHERE f.id = $1`, flightID).Scan(&n)
	return n, translateNotFound(err, "flight")
}
