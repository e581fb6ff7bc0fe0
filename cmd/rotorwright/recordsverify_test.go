package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/records"
	"github.com/rotorwright/rotorwright/store"
)

// `records verify FILE` passes a bundle as written (exit 0) and refuses one
// with a byte changed (exit 1); no file is a usage error (exit 2).
func TestRecordsVerifyCommand(t *testing.T) {
	t.Parallel()
	db := store.New(pgtest.NewPool(t))
	ctx := store.WithActor(context.Background(), store.Actor{Name: "test"})
	a, err := db.CreateAirframe(ctx, &fleet.Airframe{Code: "RV-1", Layout: "quad-x", CellsS: 6, PacksPerFlight: 1, Notes: "as delivered"})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := records.Write(ctx, db, a.ID, records.Options{}, &buf); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	good := filepath.Join(dir, "good.zip")
	if err := os.WriteFile(good, buf.Bytes(), 0o600); err != nil {
		t.Fatal(err)
	}
	var out, errw bytes.Buffer
	if code := execute(ctx, []string{"records", "verify", good}, &out, &errw); code != 0 || !strings.Contains(out.String(), "intact") {
		t.Fatalf("good bundle: exit %d, %q %q", code, out.String(), errw.String())
	}
	// airframe.json is the second entry, deflated: flip a byte of its data
	// (past the name and the 9-byte timestamp field of its local header).
	bad := append([]byte(nil), buf.Bytes()...)
	i := bytes.Index(bad, []byte("airframe.json")) + len("airframe.json") + 40
	bad[i] ^= 0xff
	badPath := filepath.Join(dir, "bad.zip")
	if err := os.WriteFile(badPath, bad, 0o600); err != nil {
		t.Fatal(err)
	}
	out.Reset()
	if code := execute(ctx, []string{"records", "verify", badPath}, &out, &errw); code != 1 || !strings.Contains(out.String(), "BROKEN") {
		t.Fatalf("changed byte: exit %d, %q", code, out.String())
	}
	if code := execute(ctx, []string{"records", "verify"}, &out, &errw); code != 2 {
		t.Fatalf("no file: exit %d", code)
	}
}
