package web_test

import (
	"context"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
)

// In a real browser: a pack flown on a manual entry says on its page how
// many of its cycles were assumed, and an airframe's vibration card names
// the band its trend is measured over (as the health routes say).
func TestBoardShowsAssumedCyclesAndVibrationBand(t *testing.T) {
	s := newService(t, 2)
	b := newBrowser(t)
	base := s.srv.URL
	b.signIn(t, base, s.token)
	ctx := store.WithActor(context.Background(), store.Actor{Name: "test"})

	pack := partOf(t, s, "pack")
	var af struct {
		Items []struct{ ID, Code string } `json:"items"`
	}
	s.get(t, "/v1/airframes?limit=1", &af)
	at := time.Now().UTC().Add(-20 * time.Minute) // after the demo's last day
	if _, err := s.db.CreateFlight(ctx, &fleet.Flight{AirframeID: af.Items[0].ID, Pilot: "test pilot", TakeoffAt: at,
		LandingAt: at.Add(10 * time.Minute), Packs: []fleet.FlightPack{{PartID: pack, Slot: 1}}}); err != nil {
		t.Fatal(err)
	}
	if _, err := health.New(s.db).Part(ctx, pack); err != nil { // the stored view the board reads
		t.Fatal(err)
	}
	b.visit(t, base+"/parts/"+pack, 1400)
	facts := eval[string](t, b, `document.querySelector("dl.facts").innerText`)
	if !strings.Contains(facts, "(1 unmeasured flight counted as a full cycle)") {
		t.Errorf("the pack's page does not say a cycle was assumed:\n%s", facts)
	}
	b.screenshot(t, "part-pack-assumed-cycle")

	var tv struct {
		Band  *[2]float64 `json:"vibration_band_hz"`
		Other int         `json:"vibration_other_band"`
	}
	s.get(t, "/v1/airframes/"+af.Items[0].ID+"/trends", &tv)
	if tv.Band == nil {
		t.Fatal("the demo airframe's trends name no vibration band")
	}
	b.visit(t, base+"/airframes/"+af.Items[0].Code, 1400)
	note := eval[string](t, b, `(document.querySelector("p.band") || {innerText: ""}).innerText`)
	if !strings.HasPrefix(note, "Measured over ") || !strings.Contains(note, " Hz") {
		t.Errorf("the vibration card's note %q does not name the band %v", note, *tv.Band)
	}
	b.screenshot(t, "airframe-vibration-band")
}
