package api_test

import (
	"context"
	"encoding/json"
	"testing"
	"time"
)

// A manual flight refreshes the stored health of what it carried, as a
// logged one does: the board and the pack's status read the stored view,
// which must count the flight (one assumed full cycle, its charge not
// measured). Before, a manual flight stored nothing until the nightly
// recompute.
func TestManualFlightRefreshesStoredHealth(t *testing.T) {
	e := newEnv(t)
	a := e.quad("MR-01")
	e.fitQuad(a, "MR", "", time.Now().Add(-72*time.Hour).UTC().Truncate(time.Second))
	pack := e.create("/v1/parts", map[string]any{"kind": "pack", "serial": "MR-PK", "part_number": "PK-6S",
		"specs": map[string]any{"chemistry": "lipo", "cells_s": 6, "cells_p": 1, "rated_mah": 16000}})
	for _, h := range []int{30, 6} {
		at := time.Now().Add(-time.Duration(h) * time.Hour).UTC().Truncate(time.Second)
		if r := e.call("POST", "/v1/flights", pilot, map[string]any{"airframe_id": a.ID, "pilot": "test pilot",
			"takeoff_at": at, "landing_at": at.Add(25 * time.Minute), "packs": []string{pack.ID}}); r.Status != 201 {
			t.Fatalf("flight: %d %s", r.Status, r.Body)
		}
	}
	raw, err := e.db.PartHealth(context.Background(), pack.ID)
	if err != nil {
		t.Fatalf("stored health of the pack after two manual flights: %v", err)
	}
	var v struct {
		Pack struct {
			Flights       int     `json:"flights"`
			Cycles        float64 `json:"cycles"`
			CyclesAssumed int     `json:"cycles_assumed"`
		} `json:"pack"`
	}
	if err := json.Unmarshal(raw, &v); err != nil {
		t.Fatal(err)
	}
	if v.Pack.Flights != 2 || v.Pack.Cycles != 2 || v.Pack.CyclesAssumed != 2 {
		t.Errorf("stored pack view %+v, want 2 flights, 2 cycles, both assumed", v.Pack)
	}
}
