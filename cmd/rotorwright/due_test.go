package main

import (
	"context"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// due --all with a pack used at 1e-12 equivalent full cycles a day: its
// 300-cycle retirement (the default programme) is 3e14 days away, printed
// as beyond the horizon, not as a wrapped date (the old arithmetic printed
// a date in the 1700s).
func TestDueBeyondHorizon(t *testing.T) {
	t.Parallel()
	url, db := testStore(t)
	ctx := store.WithActor(context.Background(), store.Actor{Name: "test"})
	a, pk := quadWithPack(t, ctx, db, "DUE-01", "DUE-P1")
	at := time.Now().Add(-48 * time.Hour).UTC().Truncate(time.Second)
	f, err := db.CreateFlight(ctx, &fleet.Flight{AirframeID: a.ID, Pilot: "O. Brandt", TakeoffAt: at,
		LandingAt: at.Add(10 * time.Minute), Packs: []fleet.FlightPack{{PartID: pk.ID}}})
	if err != nil {
		t.Fatal(err)
	}
	// 30 days x 1e-12 cycles of 8000 mAh in the trailing window.
	if _, err := db.Pool().Exec(ctx, `UPDATE flight_packs SET charge_mah = $1 WHERE flight_id = $2`, 30*1e-12*8000, f.ID); err != nil {
		t.Fatal(err)
	}
	out, errOut, code := runCLI(t, "due", "--all", "--database-url", url)
	if code != exitOK {
		t.Fatalf("due --all: exit %d\n%s", code, errOut)
	}
	var line string
	for _, l := range strings.Split(out, "\n") {
		if strings.Contains(l, "DUE-P1") {
			line = l
		}
	}
	if !strings.HasSuffix(line, "/ beyond horizon") {
		t.Errorf("pack line %q, want the forecast beyond the horizon\n%s", line, out)
	}
}
