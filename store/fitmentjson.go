package store

import (
	"context"
	"time"
)

// FitmentJSONSQL is the one query behind FitmentJSON ($1 airframe, $2
// moment): the parts fitted then and the rotor places left empty, each as
// the JSON the API sends (the shape of Fitment's parts and empty, fitted_at
// in UTC written as Go's RFC 3339 with trailing zeros trimmed), so the
// handler passes it through without decoding. No row: no such airframe.
// Exported so the benchmark runs the same SQL as its floor.
const FitmentJSONSQL = `
		WITH fitted AS (
			SELECT f.position, f.kind, p.id, p.serial, p.part_number, p.lot, lower(f.during) AS fitted_at
			FROM fits f JOIN parts p ON p.id = f.part_id
			WHERE f.airframe_id = $1 AND f.during @> $2::timestamptz)
		SELECT
			(SELECT coalesce(json_agg(json_build_object('position', position, 'kind', kind, 'part_id', id,
				'serial', serial, 'part_number', part_number, 'lot', lot,
				'fitted_at', rtrim(rtrim(to_char(fitted_at AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.US'), '0'), '.') || 'Z')
				ORDER BY kind, position), '[]') FROM fitted),
			(SELECT coalesce(json_agg(json_build_object('position', x.pos->>'label', 'kind', k.kind) ORDER BY x.i, k.o), '[]')
			 FROM jsonb_array_elements(l.positions) WITH ORDINALITY AS x(pos, i),
				(VALUES ('motor', 1), ('propeller', 2)) AS k(kind, o)
			 WHERE NOT EXISTS (SELECT 1 FROM fitted ff WHERE ff.kind = k.kind AND ff.position = x.pos->>'label'))
		FROM airframes a JOIN layouts l ON l.name = a.layout WHERE a.id = $1`

// FitmentJSON is Fitment's parts and empty places as JSON arrays, in one
// round trip and without decoding them.
func (db *DB) FitmentJSON(ctx context.Context, airframeID string, at time.Time) (parts, empty []byte, err error) {
	err = db.pool.QueryRow(ctx, FitmentJSONSQL, airframeID, at).Scan(&parts, &empty)
	if err != nil {
		return nil, nil, translateNotFound(err, "airframe")
	}
	return parts, empty, nil
}
