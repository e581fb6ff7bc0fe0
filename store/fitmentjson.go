package store

import (
	"context"
	"encoding/json"
	"sync"
	"sync/atomic"
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
	labels, err := layoutLabels(positions)
	if err != nil {
		return nil, nil, err
	}
	// The empty places as EmptyPlaces lists them: positions in layout
	// order, motor before propeller at each.
	empty = append(make([]byte, 0, 256), '[')
	for _, l := range labels {
		for _, k := range []fleet.PartKind{fleet.KindMotor, fleet.KindPropeller} {
			if fittedAt(kinds, places, string(k), l.label) {
				continue
			}
			if len(empty) > 1 {
				empty = append(empty, ',')
			}
			empty = append(empty, `{"position":`...)
			empty = append(empty, l.json...)
			empty = append(empty, `,"kind":"`...)
			empty = append(empty, k...)
			empty = append(empty, `"}`...)
		}
	}
	return parts, append(empty, ']'), nil
}

func fittedAt(kinds, places []string, kind, place string) bool {
	for i := range kinds {
		if kinds[i] == kind && places[i] == place {
			return true
		}
	}
	return false
}

// label is a layout position's label and its JSON string.
type label struct {
	label string
	json  []byte
}

// labelCache maps a layout's positions, as stored (JSON), to their labels:
// keyed by the content itself, so an entry never goes stale.
var labelCache sync.Map // string -> []label

func layoutLabels(positions []byte) ([]label, error) {
	if v, ok := labelCache.Load(string(positions)); ok {
		return v.([]label), nil
	}
	var ps []fleet.Position
	if err := json.Unmarshal(positions, &ps); err != nil {
		return nil, err
	}
	out := make([]label, len(ps))
	for i, p := range ps {
		js, err := json.Marshal(p.Label)
		if err != nil {
			return nil, err
		}
		out[i] = label{label: p.Label, json: js}
	}
	if labelCacheSize.Add(1) <= maxLabelCache { // layouts are few; never grows without bound
		labelCache.Store(string(positions), out)
	}
	return out, nil
}

const maxLabelCache = 256

var labelCacheSize atomic.Int64
