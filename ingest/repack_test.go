package ingest_test

import (
	"bytes"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/ingest"
)

// A log the service compressed at upload is marked and later repacked: the
// stored bytes shrink and still give back the text byte for byte, with an
// audit row. A gzip upload is kept as it came, never marked. A marked log
// whose stored bytes no longer give back the text recorded at upload is
// left as it was and reported, the others repacked.
func TestRepackKeepsTheText(t *testing.T) {
	r := newRig(t)
	ctx, db := r.ctx, r.db
	upload := func(hour int, gzip bool) (string, []byte) {
		t.Helper()
		id, text, err := r.upload(hour, gzip)
		if err != nil {
			t.Fatalf("upload at +%dh: %v", hour, err)
		}
		return id, text
	}
	stored := func(id string) (gz []byte, marked bool) {
		t.Helper()
		if err := db.Pool().QueryRow(ctx, `SELECT raw_gz, repack FROM flight_logs WHERE flight_id = $1`, id).Scan(&gz, &marked); err != nil {
			t.Fatal(err)
		}
		return gz, marked
	}
	plain, plainText := upload(0, false)
	zipped, _ := upload(1, true)
	broken, _ := upload(2, false)

	fast, marked := stored(plain)
	if !marked {
		t.Fatal("a log compressed at upload is not marked for repacking")
	}
	if back, err := ingest.Decompress(fast); err != nil || !bytes.Equal(back, plainText) {
		t.Fatalf("the log packed at upload reads back as %d bytes (%v), want the %d uploaded", len(back), err, len(plainText))
	}
	asSent, marked := stored(zipped)
	if marked {
		t.Fatal("a gzip upload is marked for repacking: it must stay as it came")
	}
	// The third log's stored bytes are made to give another text (a fault in
	// the records): it must be left alone, the others still repacked.
	other, _ := stored(plain)
	if _, err := db.Pool().Exec(ctx, `UPDATE flight_logs SET raw_gz = $2 WHERE flight_id = $1`,
		broken, other); err != nil {
		t.Fatal(err)
	}

	res, err := ingest.Repack(ctx, db, 10)
	if err == nil || !strings.Contains(err.Error(), broken) || res.Failed != 1 {
		t.Fatalf("repack with a log that does not match its digest: %+v, %v; want it named and counted", res, err)
	}
	if res.Logs != 1 || res.Before != int64(len(fast)) {
		t.Fatalf("repack: %+v, want the one good marked log (%d bytes) rewritten", res, len(fast))
	}
	slim, marked := stored(plain)
	if marked || len(slim) >= len(fast) || res.After != int64(len(slim)) {
		t.Fatalf("repacked log: %d bytes (was %d), still marked %v; result %+v", len(slim), len(fast), marked, res)
	}
	if back, err := ingest.Decompress(slim); err != nil || !bytes.Equal(back, plainText) {
		t.Fatalf("the repacked log reads back as %d bytes (%v), want the %d uploaded", len(back), err, len(plainText))
	}
	if now, _ := stored(zipped); !bytes.Equal(now, asSent) {
		t.Fatal("the gzip upload's stored bytes changed")
	}
	if now, marked := stored(broken); !bytes.Equal(now, other) || !marked {
		t.Fatal("the log that does not match its digest was changed or unmarked")
	}
	var audits int
	if err := db.Pool().QueryRow(ctx, `SELECT count(*) FROM audit_log WHERE entity = 'flight_log' AND entity_id = $1`,
		plain).Scan(&audits); err != nil || audits != 1 {
		t.Fatalf("audit rows of the repack: %d, %v; want 1", audits, err)
	}
	// A second run rewrites nothing more and still reports the faulty log.
	if res, err := ingest.Repack(ctx, db, 10); err == nil || res.Logs != 0 || res.Failed != 1 {
		t.Fatalf("second repack: %+v, %v", res, err)
	}
}
