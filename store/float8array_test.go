package store

import (
	"context"
	"math"
	"testing"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"

	"github.com/rotorwright/rotorwright/internal/pgtest"
)

// TestFloat8ArrayAsPgx holds float8Array, the hand decoder of binary
// float8[] RotorRunsOf uses, to pgx's own array codec on arrays the server
// sends: with NULLs, empty, one element, signed zero, infinities, NaN and
// subnormals, in binary and in text format.
func TestFloat8ArrayAsPgx(t *testing.T) {
	pool := pgtest.NewPool(t)
	ctx := context.Background()
	for _, lit := range []string{`'{}'`, `'{1.5}'`, `'{1,NULL,-0,3.25,NULL}'`, `'{NULL}'`,
		`'{Infinity,-Infinity,NaN,4.9406564584124654e-324,1.7976931348623157e308}'`,
		`ARRAY(SELECT g / 7.0 FROM generate_series(1, 500) g)::float8[]`} {
		for _, format := range []int16{pgtype.BinaryFormatCode, pgtype.TextFormatCode} {
			rows, err := pool.Query(ctx, `SELECT (`+lit+`)::float8[]`, pgx.QueryResultFormats{format})
			if err != nil {
				t.Fatal(err)
			}
			if !rows.Next() {
				t.Fatal(lit, rows.Err())
			}
			fd, raw := rows.FieldDescriptions()[0], append([]byte(nil), rows.RawValues()[0]...)
			rows.Close()
			if fd.Format != format {
				t.Fatalf("%s: format %d, asked %d", lit, fd.Format, format)
			}
			got, err := float8Array(fd.Format, raw)
			if err != nil {
				t.Fatalf("%s: %v", lit, err)
			}
			var want []*float64
			if err := pgtype.NewMap().Scan(pgtype.Float8ArrayOID, fd.Format, raw, &want); err != nil {
				t.Fatal(err)
			}
			if got == nil || len(got) != len(want) {
				t.Fatalf("%s (format %d): %d values, pgx %d", lit, format, len(got), len(want))
			}
			for i := range want {
				if (got[i] == nil) != (want[i] == nil) ||
					(got[i] != nil && math.Float64bits(*got[i]) != math.Float64bits(*want[i])) {
					t.Errorf("%s (format %d) [%d]: %v, pgx %v", lit, format, i, got[i], want[i])
				}
			}
		}
	}
	if _, err := float8Array(pgtype.BinaryFormatCode, []byte{0, 0, 0, 1, 0, 0, 0, 0, 0, 0, 2, 189, 0, 0, 0, 2, 0, 0, 0, 1, 0, 0, 0, 8}); err == nil {
		t.Error("a truncated array decoded without error")
	}
}
