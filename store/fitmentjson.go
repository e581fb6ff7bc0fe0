package store

import (
	"context"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"slices"
	"sync"
	"time"

	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"

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
// Both are slices of one allocation. The row is read as it arrives (the
// fitted kinds and places walked in place, not decoded to strings): it is
// the whole of the lookup's work, and the API serves it thousands of
// times a second.
func (db *DB) FitmentJSON(ctx context.Context, airframeID string, at time.Time) (parts, empty []byte, err error) {
	buf, n, err := db.AppendFitmentJSON(ctx, nil, airframeID, at, "")
	if err != nil {
		return nil, nil, err
	}
	return buf[:n:n], buf[n:], nil
}

// AppendFitmentJSON appends to dst what FitmentJSON returns: the parts
// array, then sep, then the empty places array; partsEnd is where the parts
// end in out. A caller that writes an envelope around them (the API) can
// so write the whole answer into one buffer it reuses.
func (db *DB) AppendFitmentJSON(ctx context.Context, dst []byte, airframeID string, at time.Time, sep string) (out []byte, partsEnd int, err error) {
	rows, err := db.pool.Query(ctx, FitmentJSONSQL, airframeID, at)
	if err != nil {
		return dst, 0, translate(err)
	}
	defer rows.Close()
	if !rows.Next() {
		if err := rows.Err(); err != nil {
			return dst, 0, translate(err)
		}
		return dst, 0, notFound("airframe")
	}
	raw, fd := rows.RawValues(), rows.FieldDescriptions()
	var kbuf, pbuf [16][]byte // a quad has 8 fits, an octo 16: no allocation
	kinds, err := textArray(fd[2].Format, raw[2], kbuf[:0])
	if err != nil {
		return dst, 0, err
	}
	places, err := textArray(fd[3].Format, raw[3], pbuf[:0])
	if err != nil {
		return dst, 0, err
	}
	if len(kinds) != len(places) {
		return dst, 0, fmt.Errorf("fitment: %d kinds, %d places", len(kinds), len(places))
	}
	positions, err := jsonText(fd[0], raw[0])
	if err != nil {
		return dst, 0, err
	}
	labels, err := layoutLabels(positions)
	if err != nil {
		return dst, 0, err
	}
	buf := slices.Grow(dst, len(raw[1])+len(sep)+2+len(labels)*96)
	partsJSON, err := jsonText(fd[1], raw[1])
	if err != nil {
		return dst, 0, err
	}
	buf = append(buf, partsJSON...)
	end := len(buf)
	buf = append(buf, sep...)
	n := len(buf)
	// The empty places as EmptyPlaces lists them: positions in layout
	// order, motor before propeller at each.
	buf = append(buf, '[')
	for _, l := range labels {
		for _, k := range [...]fleet.PartKind{fleet.KindMotor, fleet.KindPropeller} {
			if fittedAt(kinds, places, string(k), l.label) {
				continue
			}
			if len(buf) > n+1 {
				buf = append(buf, ',')
			}
			buf = append(buf, `{"position":`...)
			buf = append(buf, l.json...)
			buf = append(buf, `,"kind":"`...)
			buf = append(buf, k...)
			buf = append(buf, `"}`...)
		}
	}
	buf = append(buf, ']')
	rows.Close()
	if err := rows.Err(); err != nil {
		return dst, 0, translate(err)
	}
	return buf, end, nil
}

func fittedAt(kinds, places [][]byte, kind, place string) bool {
	for i := range kinds {
		if string(kinds[i]) == kind && string(places[i]) == place {
			return true
		}
	}
	return false
}

// textArray appends the elements of a one-dimensional text[] to out as
// slices of b, which PostgreSQL sends in binary as array_send writes it
// (dimensions, a has-nulls flag, the element type, each dimension's length
// and lower bound, then each element as a length and its bytes). Text
// format (the simple protocol) is handed to pgx. A NULL is an error: the
// query coalesces its arrays and aggregates NOT NULL columns.
func textArray(format int16, b []byte, out [][]byte) ([][]byte, error) {
	if b == nil {
		return nil, fmt.Errorf("text array: NULL")
	}
	if format != pgtype.BinaryFormatCode {
		var ss []string
		if err := pgtype.NewMap().Scan(pgtype.TextArrayOID, format, b, &ss); err != nil {
			return nil, err
		}
		for _, s := range ss {
			out = append(out, []byte(s))
		}
		return out, nil
	}
	bad := func(why string) error { return fmt.Errorf("text array: %s", why) }
	if len(b) < 12 {
		return nil, bad("short header")
	}
	ndim := binary.BigEndian.Uint32(b)
	if ndim == 0 {
		return out, nil
	}
	if ndim != 1 || len(b) < 20 {
		return nil, bad(fmt.Sprintf("%d dimensions", ndim))
	}
	if oid := binary.BigEndian.Uint32(b[8:]); oid != pgtype.TextOID {
		return nil, bad(fmt.Sprintf("element type %d", oid))
	}
	n := int(binary.BigEndian.Uint32(b[12:]))
	b = b[20:]
	for range n {
		if len(b) < 4 {
			return nil, bad("short element")
		}
		l := int32(binary.BigEndian.Uint32(b))
		b = b[4:]
		if l < 0 || int(l) > len(b) {
			return nil, bad(fmt.Sprintf("element of %d bytes", l))
		}
		out, b = append(out, b[:l:l]), b[l:]
	}
	if len(b) != 0 {
		return nil, bad("trailing bytes")
	}
	return out, nil
}

// jsonText is a jsonb column's JSON text: as sent in text format, or after
// the version byte (1) that starts jsonb's binary format.
func jsonText(fd pgconn.FieldDescription, b []byte) ([]byte, error) {
	if fd.Format != pgtype.BinaryFormatCode || fd.DataTypeOID != pgtype.JSONBOID {
		return b, nil
	}
	if len(b) == 0 || b[0] != 1 {
		return nil, fmt.Errorf("jsonb: unknown binary version")
	}
	return b[1:], nil
}

// label is a layout position's label and its JSON string.
type label struct {
	label string
	json  []byte
}

// parsedLayout is a layout's positions as parsed, with their labels.
type parsedLayout struct {
	positions []fleet.Position // shared: callers copy before handing it on
	labels    []label
}

// layoutCache maps a layout's positions, as stored (JSON), to them parsed:
// keyed by the content itself, so an entry never goes stale (an edited
// layout is other JSON). The fitment and readiness answers read a layout
// every time and a fleet has a few. A map under a read lock, not a
// sync.Map, so that a look-up with the row's bytes allocates nothing.
var layoutCache = struct {
	sync.RWMutex
	m map[string]*parsedLayout
}{m: map[string]*parsedLayout{}}

const maxLayoutCache = 256 // layouts are few; never grows without bound

// parseLayout returns the positions JSON parsed, from layoutCache when it
// holds them.
func parseLayout(positions []byte) (*parsedLayout, error) {
	layoutCache.RLock()
	v, ok := layoutCache.m[string(positions)]
	layoutCache.RUnlock()
	if ok {
		return v, nil
	}
	v = &parsedLayout{}
	if err := json.Unmarshal(positions, &v.positions); err != nil {
		return nil, err
	}
	v.labels = make([]label, len(v.positions))
	for i, p := range v.positions {
		js, err := json.Marshal(p.Label)
		if err != nil {
			return nil, err
		}
		v.labels[i] = label{label: p.Label, json: js}
	}
	layoutCache.Lock()
	if len(layoutCache.m) < maxLayoutCache {
		layoutCache.m[string(positions)] = v
	}
	layoutCache.Unlock()
	return v, nil
}

func layoutLabels(positions []byte) ([]label, error) {
	l, err := parseLayout(positions)
	if err != nil {
		return nil, err
	}
	return l.labels, nil
}
