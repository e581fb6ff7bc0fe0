package store

import (
	"encoding/binary"
	"fmt"
	"math"

	"github.com/jackc/pgx/v5/pgtype"
)

// float8Array decodes a one-dimensional float8[] as PostgreSQL sends it in
// binary (array_send: dimensions, a has-nulls flag, the element type, each
// dimension's length and lower bound, then each element as a length, -1 for
// NULL, and eight big-endian bytes), NULL elements as nil. An empty array
// is an empty, non-nil slice. Text format is handed to pgx.
func float8Array(format int16, b []byte) ([]*float64, error) {
	if b == nil {
		return nil, fmt.Errorf("float8 array: NULL")
	}
	if format != pgtype.BinaryFormatCode {
		var out []*float64
		if err := pgtype.NewMap().Scan(pgtype.Float8ArrayOID, format, b, &out); err != nil {
			return nil, err
		}
		if out == nil {
			out = []*float64{}
		}
		return out, nil
	}
	bad := func(why string) error { return fmt.Errorf("float8 array: %s", why) }
	if len(b) < 12 {
		return nil, bad("short header")
	}
	ndim := binary.BigEndian.Uint32(b)
	if ndim == 0 {
		return []*float64{}, nil
	}
	if ndim != 1 || len(b) < 20 {
		return nil, bad(fmt.Sprintf("%d dimensions", ndim))
	}
	if oid := binary.BigEndian.Uint32(b[8:]); oid != pgtype.Float8OID {
		return nil, bad(fmt.Sprintf("element type %d", oid))
	}
	n := int(binary.BigEndian.Uint32(b[12:]))
	b = b[20:]
	out := make([]*float64, n)
	vals := make([]float64, n) // one allocation for every element
	for i := range out {
		if len(b) < 4 {
			return nil, bad("short element")
		}
		l := int32(binary.BigEndian.Uint32(b))
		b = b[4:]
		if l == -1 {
			continue
		}
		if l != 8 || len(b) < 8 {
			return nil, bad(fmt.Sprintf("element of %d bytes", l))
		}
		vals[i] = math.Float64frombits(binary.BigEndian.Uint64(b))
		out[i], b = &vals[i], b[8:]
	}
	if len(b) != 0 {
		return nil, bad("trailing bytes")
	}
	return out, nil
}

// packedBins decodes bins_packed as the statement returned it: binary is
// the bytes themselves (pgx asks for binary for bytea), decoded without a
// copy; text (the simple protocol) is unescaped by pgx first.
func packedBins(format int16, b []byte) ([]*float64, error) {
	if format != pgtype.BinaryFormatCode && b != nil {
		var raw []byte
		if err := pgtype.NewMap().Scan(pgtype.ByteaOID, format, b, &raw); err != nil {
			return nil, err
		}
		b = raw
	}
	return packedFloats(b)
}

// packedFloats decodes motor_runs.bins_packed (migration 023): each value a
// tag byte, 0 for NULL (nil here) and 1 for a value, then for a value its
// eight big-endian bytes. An empty input is an empty, non-nil slice.
func packedFloats(b []byte) ([]*float64, error) {
	if b == nil {
		return nil, fmt.Errorf("packed floats: NULL")
	}
	n := 0 // values: count the tags first, for one allocation of each kind
	for i := 0; i < len(b); n++ {
		switch b[i] {
		case 0:
			i++
		case 1:
			if i+9 > len(b) {
				return nil, fmt.Errorf("packed floats: value %d cut short", n)
			}
			i += 9
		default:
			return nil, fmt.Errorf("packed floats: tag %d at byte %d", b[i], i)
		}
	}
	out, vals := make([]*float64, n), make([]float64, n)
	for i := range out {
		if b[0] == 0 {
			b = b[1:]
			continue
		}
		vals[i] = math.Float64frombits(binary.BigEndian.Uint64(b[1:]))
		out[i], b = &vals[i], b[9:]
	}
	return out, nil
}
