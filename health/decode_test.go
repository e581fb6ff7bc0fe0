package health_test

import (
	"encoding/json"
	"fmt"
	"reflect"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// Stored views decode with DecodeView (goccy/go-json) to exactly what
// encoding/json, the reference, gives: motors in both bearing modes, packs
// with their resistance series and forecast, after simulated flights.
func TestDecodeViewAsStdlib(t *testing.T) {
	r := newRig(t)
	now := time.Now().UTC().Truncate(time.Second)
	r.hs.Now = func() time.Time { return now }
	for i, c := range []float64{2000, 0} {
		code := fmt.Sprintf("DV-%d", i)
		pk := sim.PackState{Serial: code + "-P", Chemistry: sim.LiPo, CellsS: 4, CellsP: 1, RatedMah: 8000, BaselineIRmOhm: 16, StartSoC: 1}
		af, _, pkPart := r.quad(code, c, pk)
		for k := 0; k < 8; k++ {
			spec := sim.DefaultSpec(uint64(700 + 10*i + k))
			spec.Airframe, spec.Start, spec.SampleHz, spec.DurationS = code, now.Add(-time.Duration(12-k)*24*time.Hour), 5, 240
			spec.Packs[0].Serial = pk.Serial
			r.fly(af, pkPart, spec)
		}
	}
	if _, err := r.hs.Recompute(r.ctx, nil); err != nil {
		t.Fatal(err)
	}
	parts, err := r.db.HealthParts(r.ctx)
	if err != nil {
		t.Fatal(err)
	}
	seen := map[string]int{}
	for _, id := range parts {
		raw, err := r.db.PartHealth(r.ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		var want health.View
		if err := json.Unmarshal(raw, &want); err != nil {
			t.Fatal(err)
		}
		got, err := health.DecodeView(raw)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(*got, want) {
			t.Errorf("%s %s: go-json\n%+v\nstdlib\n%+v", want.Kind, want.Serial, *got, want)
		}
		switch {
		case want.Motor != nil && len(want.Motor.Series) > 0:
			seen["motor/"+want.Motor.Mode]++
		case want.Pack != nil && want.Pack.Resistance != nil && want.Pack.Resistance.Forecast != nil:
			seen["pack"]++
		}
	}
	// The fixture reaches what the views carry.
	if seen["motor/absolute"] == 0 || seen["motor/relative"] == 0 || seen["pack"] == 0 {
		t.Errorf("views seen: %v", seen)
	}
}
