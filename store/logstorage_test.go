package store_test

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// TestStoredLogNotRecompressed: the database keeps a stored log's bytes as
// given, out of line, without its own compression (migration 022). A stored
// log is gzip already; under the default storage the database first tries
// pglz on every new log, which on gzip output runs most of the way before
// giving up (about 100 ms of a 4 MB log's insert, DEVELOPERS.md). The bytes
// here are ones pglz does compress, so the default storage shows as a
// stored size below the length; EXTERNAL stores them whole.
func TestStoredLogNotRecompressed(t *testing.T) {
	f := newFixture(t)
	a := f.airframe("LOG-1", "quad-x")
	at := time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)
	raw := bytes.Repeat([]byte("0.000,1500,1500,1500,1500\n"), 20000) // 520 kB, compressible
	sum := sha256.Sum256(raw)
	sha := hex.EncodeToString(sum[:])
	fl := &fleet.Flight{AirframeID: a.ID, Pilot: "T. Varga", TakeoffAt: at, LandingAt: at.Add(20 * time.Minute),
		Source: fleet.SourceLog, LogSHA256: &sha}
	id, created, err := f.db.CreateLoggedFlight(f.ctx, &store.LoggedFlight{Flight: fl, RawGz: raw,
		RawBytes: int64(len(raw)), Samples: 20000, Analysis: &store.Analysis{Version: 1, Metrics: []byte(`{}`)}})
	if err != nil || !created {
		t.Fatalf("create logged flight: created %v, %v", created, err)
	}
	var stored, length int
	if err := f.db.Pool().QueryRow(f.ctx, `SELECT pg_column_size(raw_gz), octet_length(raw_gz) FROM flight_logs
		WHERE flight_id = $1`, id).Scan(&stored, &length); err != nil {
		t.Fatal(err)
	}
	if length != len(raw) || stored < length {
		t.Errorf("stored log: %d bytes stored for %d bytes of log (%d given): the database compressed it again",
			stored, length, len(raw))
	}
	got, err := f.db.RawLog(f.ctx, id)
	if err != nil || !bytes.Equal(got, raw) {
		t.Errorf("raw log read back: %d bytes, %v", len(got), err)
	}
}
