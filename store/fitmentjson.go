package store

import (
	"context"
	"encoding/json"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// FitmentJSONSQL is the one query behind FitmentJSON ($1 airframe, $2
// moment): the layout's positions, the parts fitted then as the JSON the
// API sends (Fitment's parts; fitted_at in UTC written as Go writes RFC 3339,
// trailing zeros of the fraction trimmed, which to_json does too), and the
// fitted kinds and positions for the empty places. No row: no such airframe.
// Exported so the benchmark runs the same SQL as its floor.
const FitmentJSONSQL = `
		SELECT l.positions, coalesce(x.parts, '[]'), coalesce(x.kinds, '{}'), coalesce(x.places, '{}')
		FROM airframes a JOIN layouts l ON l.name = a.layout, LATERAL (
			SELECT json_agg(json_build_object('position', f.position, 'kind', f.kind, 'part_id', p.id,
				'serial', p.serial, 'part_number', p.part_number, 'lot', p.lot,
				'fitted_at', (to_json(lower(f.during) AT TIME ZONE 'UTC') #>> '{}') || 'Z')
				ORDER BY f.kind, f.position) AS parts,
				array_agg(f.kind) AS kinds, array_agg(f.position) AS places
			FROM fits f JOIN parts p ON p.id = f.part_id
			WHERE f.airframe_id = a.id AND f.during @> $2::timestamptz) x
		WHERE a.id = $1`

// FitmentJSON is Fitment's parts and empty places as JSON arrays in one
// round trip; the parts come as the database wrote them, never decoded.
func (db *DB) FitmentJSON(ctx context.Context, airframeID string, at time.Time) (parts, empty []byte, err error) {
	var positions []byte
	var kinds, places []string
	err = db.pool.QueryRow(ctx, FitmentJSONSQL, airframeID, at).Scan(&positions, &parts, &kinds, &places)
	if err != nil {
		return nil, nil, translateNotFound(err, "airframe")
	}
	l := &fleet.Layout{}
	if err := json.Unmarshal(positions, &l.Positions); err != nil {
		return nil, nil, err
	}
	fitted := make([]fleet.FittedPart, len(kinds))
	for i := range kinds {
		fitted[i] = fleet.FittedPart{Kind: fleet.PartKind(kinds[i]), Position: places[i]}
	}
	if empty, err = json.Marshal(EmptyPlaces(l, fitted)); err != nil {
		return nil, nil, err
	}
	return parts, empty, nil
}
