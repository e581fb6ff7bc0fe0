package store

import (
	"encoding/binary"
	"testing"

	"github.com/jackc/pgx/v5/pgtype"
)

// textArray refuses malformed binary arrays rather than reading past them.
func TestTextArrayMalformed(t *testing.T) {
	arr := func(oid uint32, elems ...[]byte) []byte {
		b := binary.BigEndian.AppendUint32(nil, 1) // one dimension
		b = binary.BigEndian.AppendUint32(b, 0)
		b = binary.BigEndian.AppendUint32(b, oid)
		b = binary.BigEndian.AppendUint32(b, uint32(len(elems)))
		b = binary.BigEndian.AppendUint32(b, 1)
		for _, e := range elems {
			b = binary.BigEndian.AppendUint32(b, uint32(len(e)))
			b = append(b, e...)
		}
		return b
	}
	good := arr(pgtype.TextOID, []byte("motor"), []byte("propeller"))
	got, err := textArray(pgtype.BinaryFormatCode, good, nil)
	if err != nil || len(got) != 2 || string(got[0]) != "motor" || string(got[1]) != "propeller" {
		t.Fatalf("good array: %q %v", got, err)
	}
	for name, b := range map[string][]byte{
		"NULL":           nil,
		"short header":   good[:8],
		"truncated":      good[:len(good)-3],
		"trailing":       append(append([]byte{}, good...), 0),
		"element type":   arr(pgtype.Int4OID, []byte{0, 0, 0, 1}),
		"NULL element":   append(arr(pgtype.TextOID)[:12], 0, 0, 0, 1, 0, 0, 0, 1, 0xff, 0xff, 0xff, 0xff),
		"two dimensions": append([]byte{0, 0, 0, 2}, good[4:]...),
	} {
		if got, err := textArray(pgtype.BinaryFormatCode, b, nil); err == nil {
			t.Errorf("%s: %q, want an error", name, got)
		}
	}
}
