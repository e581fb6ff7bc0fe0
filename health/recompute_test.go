package health_test

import (
	"encoding/json"
	"fmt"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/store"
)

// The fleet recompute reads parts in batches and stores their views in one
// statement per batch, on workers; every view it stores is the one Part
// (and Airframe) stores for the same part one at a time: motors with and
// without a bearing rating (absolute and relative mode, the model's duty
// shared), propellers fitted, removed and struck (naming the propeller, and
// on the airframe naming none), packs, airframe trends.
func TestRecomputeMatchesOneByOne(t *testing.T) {
	r := newRig(t)
	now := time.Now().UTC().Truncate(time.Second)
	r.hs.Now = func() time.Time { return now }
	pack := func(serial string) sim.PackState {
		return sim.PackState{Serial: serial, Chemistry: sim.LiPo, CellsS: 4, CellsP: 1, RatedMah: 8000, BaselineIRmOhm: 16, StartSoC: 1}
	}
	var props []*fleet.Part
	for i, c := range []float64{2000, 0} {
		code := fmt.Sprintf("RB-%d", i)
		pk := pack(code + "-P")
		af, _, pkPart := r.quad(code, c, pk)
		for j, rot := range []string{"ccw", "cw", "ccw", "cw"} {
			raw, _ := json.Marshal(map[string]any{"rotation": rot, "diameter_in": 10, "blades": 2})
			p, err := r.db.CreatePart(r.ctx, &fleet.Part{Kind: fleet.KindPropeller, Serial: fmt.Sprintf("%s-R%d", code, j+1),
				PartNumber: "PR-10", Specs: raw})
			if err != nil {
				t.Fatal(err)
			}
			if _, err := r.db.Fit(r.ctx, af.ID, store.FitRequest{PartID: p.ID, Position: fmt.Sprintf("m%d", j+1),
				At: now.AddDate(0, 0, -20)}); err != nil {
				t.Fatal(err)
			}
			props = append(props, p)
		}
		for k := 0; k < 6; k++ {
			spec := sim.DefaultSpec(uint64(300 + 10*i + k))
			spec.Airframe, spec.Start, spec.SampleHz, spec.DurationS = code, now.Add(-time.Duration(12-k)*24*time.Hour), 5, 240
			spec.Packs[0].Serial = pk.Serial
			spec.VibrationLevel = 0.8 * (1 + 0.1*float64(k))
			r.fly(af, pkPart, spec)
		}
		strike := &fleet.Event{Kind: "prop_strike", At: now.Add(-3 * 24 * time.Hour), Detail: "ground contact", AirframeID: &af.ID}
		if i == 0 {
			strike.PartID = &props[1].ID // names one propeller
		}
		if _, err := r.db.CreateEvent(r.ctx, strike); err != nil {
			t.Fatal(err)
		}
		if i == 1 { // and one on the airframe naming none
			if _, err := r.db.Remove(r.ctx, af.ID, store.RemovalRequest{PartID: props[4].ID, At: now.Add(-time.Hour),
				Reason: "chipped"}); err != nil {
				t.Fatal(err)
			}
		}
	}
	n, err := r.hs.Recompute(r.ctx, nil)
	if err != nil {
		t.Fatal(err)
	}
	parts, err := r.db.HealthParts(r.ctx)
	if err != nil {
		t.Fatal(err)
	}
	airframes, err := r.db.AirframeIDs(r.ctx)
	if err != nil {
		t.Fatal(err)
	}
	if n != len(parts)+len(airframes) || len(parts) != 18 {
		t.Fatalf("recomputed %d views of %d parts and %d airframes, want 18 parts", n, len(parts), len(airframes))
	}
	batch := map[string]string{}
	for _, id := range parts {
		raw, err := r.db.PartHealth(r.ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		batch[id] = string(raw)
	}
	for _, id := range airframes {
		raw, err := r.db.AirframeTrends(r.ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		batch[id] = string(raw)
	}
	kinds := map[string]int{}
	for _, id := range parts {
		v, err := r.hs.Part(r.ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		kinds[string(v.Kind)+"/"+v.Status]++
		raw, err := r.db.PartHealth(r.ctx, id) // stored by Part, as jsonb like the batch's
		if err != nil {
			t.Fatal(err)
		}
		if string(raw) != batch[id] {
			t.Errorf("%s %s: batch view\n%s\none by one\n%s", v.Kind, v.Serial, batch[id], raw)
		}
	}
	for _, id := range airframes {
		if _, err := r.hs.Airframe(r.ctx, id); err != nil {
			t.Fatal(err)
		}
		raw, err := r.db.AirframeTrends(r.ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		if string(raw) != batch[id] {
			t.Errorf("airframe %s: batch trends\n%s\none by one\n%s", id, batch[id], raw)
		}
	}
	// The refresh after an ingest reads a flight's parts as one batch too
	// (its strikes read for the batch): again the same views.
	for _, id := range airframes {
		flights, _, err := r.db.Flights(r.ctx, store.FlightFilter{AirframeID: id}, store.Page{Limit: 1})
		if err != nil || len(flights) != 1 {
			t.Fatalf("flights of %s: %d, %v", id, len(flights), err)
		}
		if err := r.hs.Refresh(r.ctx, flights[0].ID); err != nil {
			t.Fatal(err)
		}
	}
	for _, id := range parts {
		raw, err := r.db.PartHealth(r.ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		if string(raw) != batch[id] {
			t.Errorf("part %s after a refresh:\n%s\nwant\n%s", id, raw, batch[id])
		}
	}
	// The fixture reaches the cases named above.
	if kinds["propeller/not_fitted"] != 1 || kinds["propeller/replace"] < 2 || kinds["pack/"] > 0 {
		t.Errorf("views by kind and status: %v", kinds)
	}
}
