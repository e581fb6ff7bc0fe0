package main

import (
	"context"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/store"
)

// testStore opens a store on a new test database and returns the
// database's URL (for the command line) beside it; the store is closed when
// the test ends.
func testStore(t *testing.T) (string, *store.DB) {
	t.Helper()
	url := pgtest.NewDB(t)
	db, err := store.Open(context.Background(), url)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(db.Close)
	return url, db
}

// quadWithPack records a quad airframe and a 4S 8000 mAh pack, not fitted.
func quadWithPack(t *testing.T, ctx context.Context, db *store.DB, code, serial string) (*fleet.Airframe, *fleet.Part) {
	t.Helper()
	a, err := db.CreateAirframe(ctx, &fleet.Airframe{Code: code, Layout: "quad-x", CellsS: 4, PacksPerFlight: 1})
	if err != nil {
		t.Fatal(err)
	}
	p, err := db.CreatePart(ctx, &fleet.Part{Kind: fleet.KindPack, Serial: serial,
		Specs: []byte(`{"chemistry":"lipo","cells_s":4,"cells_p":1,"rated_mah":8000}`)})
	if err != nil {
		t.Fatal(err)
	}
	return a, p
}

func ip(n int) *int { return &n }
