package health_test

import (
	"encoding/json"
	"fmt"
	"reflect"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/store"
)

// Views are stored as store.MarshalView (goccy/go-json) encodes them: the
// database stores what it stores of encoding/json's text (the reference),
// and both decode to the same values: motors in both
// bearing modes, propellers, packs with their resistance series and
// forecasts, airframe trends, after simulated flights.
func TestMarshalViewAsStdlib(t *testing.T) {
	r := newRig(t)
	now := time.Now().UTC().Truncate(time.Second)
	r.hs.Now = func() time.Time { return now }
	var airframes []string
	for i, c := range []float64{2000, 0} {
		code := fmt.Sprintf("MV-%d", i)
		pk := sim.PackState{Serial: code + "-P", Chemistry: sim.LiPo, CellsS: 4, CellsP: 1, RatedMah: 8000, BaselineIRmOhm: 16, StartSoC: 1}
		af, _, pkPart := r.quad(code, c, pk)
		raw, _ := json.Marshal(map[string]any{"rotation": "ccw", "diameter_in": 10, "blades": 2})
		prop, err := r.db.CreatePart(r.ctx, &fleet.Part{Kind: fleet.KindPropeller, Serial: code + "-R1", PartNumber: "PR-10", Specs: raw})
		if err != nil {
			t.Fatal(err)
		}
		if _, err := r.db.Fit(r.ctx, af.ID, store.FitRequest{PartID: prop.ID, Position: "m1", At: now.AddDate(0, 0, -20)}); err != nil {
			t.Fatal(err)
		}
		for k := 0; k < 8; k++ {
			spec := sim.DefaultSpec(uint64(750 + 10*i + k))
			spec.Airframe, spec.Start, spec.SampleHz, spec.DurationS = code, now.Add(-time.Duration(12-k)*24*time.Hour), 5, 240
			spec.Packs[0].Serial = pk.Serial
			spec.VibrationLevel = 0.8 * (1 + 0.1*float64(k))
			r.fly(af, pkPart, spec)
		}
		airframes = append(airframes, af.ID)
	}
	parts, err := r.db.HealthParts(r.ctx)
	if err != nil {
		t.Fatal(err)
	}
	var views []any
	seen := map[string]int{}
	for _, id := range parts {
		v, err := r.hs.Part(r.ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		views = append(views, v)
		switch {
		case v.Motor != nil && len(v.Motor.Series) > 0:
			seen["motor/"+v.Motor.Mode]++
		case v.Pack != nil && v.Pack.Resistance != nil && v.Pack.Resistance.Forecast != nil:
			seen["pack"]++
		case v.Propeller != nil:
			seen["propeller"]++
		}
	}
	for _, id := range airframes {
		tv, err := r.hs.Airframe(r.ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		views = append(views, tv)
		if tv.EfficiencyIndex != nil {
			seen["trends"]++
		}
	}
	for _, v := range views {
		want, err := json.Marshal(v)
		if err != nil {
			t.Fatal(err)
		}
		got, err := store.MarshalView(v)
		if err != nil {
			t.Fatal(err)
		}
		// go-json writes small exponents as e-09 where encoding/json writes
		// e-9: the same number, and jsonb keeps numbers as numeric values,
		// so what is stored is what the database makes of each text.
		var same bool
		var gotText, wantText string
		if err := r.db.Pool().QueryRow(r.ctx, `SELECT $1::jsonb::text = $2::jsonb::text, $1::jsonb::text, $2::jsonb::text`,
			string(got), string(want)).Scan(&same, &gotText, &wantText); err != nil {
			t.Fatal(err)
		}
		if !same {
			i := 0
			for i < min(len(gotText), len(wantText)) && gotText[i] == wantText[i] {
				i++
			}
			t.Errorf("stored views differ at byte %d: go-json %q, stdlib %q", i,
				gotText[max(0, i-40):min(len(gotText), i+40)], wantText[max(0, i-40):min(len(wantText), i+40)])
		}
		// And both decode to the same values.
		var a, b any
		if err := json.Unmarshal(got, &a); err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(want, &b); err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(a, b) {
			t.Errorf("decoded views differ")
		}
	}
	// The fixture reaches what the views carry.
	for _, k := range []string{"motor/absolute", "motor/relative", "pack", "propeller", "trends"} {
		if seen[k] == 0 {
			t.Errorf("no %s view: %v", k, seen)
		}
	}
}
