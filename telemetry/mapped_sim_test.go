package telemetry_test

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/telemetry"
)

// simMaps decodes and validates the column maps of the simulator's invented
// foreign layouts, as the API would on creation.
func simMaps(t testing.TB) []*fleet.ColumnMap {
	t.Helper()
	var out []*fleet.ColumnMap
	for _, l := range sim.LogLayouts() {
		var m fleet.ColumnMap
		if err := json.Unmarshal(l.Map, &m); err != nil {
			t.Fatalf("layout %s: map does not decode: %v", l.Name, err)
		}
		if err := m.Validate(); err != nil {
			t.Fatalf("layout %s: map refused: %v", l.Name, err)
		}
		out = append(out, &m)
	}
	return out
}

// One flight written in the native layout and in the three foreign layouts
// gives the same figures and events: every number of the metrics within
// 1e-9 relative (the bound; unit conversions by a power of ten are
// exact here, the Fahrenheit one rounds at 1e-16), every text the same.
func TestLayoutsGiveNativeFigures(t *testing.T) {
	maps := simMaps(t)
	specs := map[string]sim.FlightSpec{"quad": sim.DefaultSpec(21), "octo": octoSpec(22), "throttle": sim.DefaultSpec(23)}
	th := specs["throttle"]
	th.Columns = sim.ColumnsThrottle
	specs["throttle"] = th
	for name, spec := range specs {
		t.Run(name, func(t *testing.T) {
			t.Parallel()
			spec.DurationS = 300
			spec.LandingG = 3.2 // a hard landing, so the events are compared too
			var native bytes.Buffer
			tr, err := sim.Generate(spec, &native)
			if err != nil {
				t.Fatal(err)
			}
			nl, err := telemetry.Parse(bytes.NewReader(native.Bytes()), telemetry.Limits{})
			if err != nil {
				t.Fatal(err)
			}
			p := flightParams(spec, tr, 25)
			p.Airborne = nil // found from the log, so the span itself is compared
			want := analyze(t, nl, p)
			if len(want.Events) == 0 {
				t.Fatal("the reference flight has no events to compare")
			}
			for i, l := range sim.LogLayouts() {
				var b bytes.Buffer
				if err := l.Rewrite(native.Bytes(), &b); err != nil {
					t.Fatal(err)
				}
				ml, err := telemetry.ParseMapped(bytes.NewReader(b.Bytes()), maps[i], telemetry.Limits{})
				if err != nil {
					t.Fatalf("layout %s: %v", l.Name, err)
				}
				if ml.Rows != nl.Rows || len(ml.Unknown) > 1 {
					t.Fatalf("layout %s: %d rows (native %d), unknown %v", l.Name, ml.Rows, nl.Rows, ml.Unknown)
				}
				if maps[i].Time.Origin != fleet.OriginStart && !ml.Meta.Start.Equal(*nl.Meta.Start) {
					t.Errorf("layout %s: start %v, native %v", l.Name, ml.Meta.Start, nl.Meta.Start)
				}
				got := analyze(t, ml, p)
				sameFigures(t, l.Name, want, got, 1e-9)
			}
		})
	}
}

// sameFigures compares two metrics member by member through their JSON.
func sameFigures(t *testing.T, layout string, want, got *telemetry.Metrics, rel float64) {
	t.Helper()
	var a, b any
	for _, x := range []struct {
		m   *telemetry.Metrics
		dst *any
	}{{want, &a}, {got, &b}} {
		raw, err := json.Marshal(x.m)
		if err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(raw, x.dst); err != nil {
			t.Fatal(err)
		}
	}
	worst := 0.0
	var walk func(path string, a, b any)
	walk = func(path string, a, b any) {
		switch av := a.(type) {
		case map[string]any:
			bv, ok := b.(map[string]any)
			if !ok || len(bv) != len(av) {
				t.Errorf("layout %s: %s: %v, native %v", layout, path, b, a)
				return
			}
			for k := range av {
				walk(path+"."+k, av[k], bv[k])
			}
		case []any:
			bv, ok := b.([]any)
			if !ok || len(bv) != len(av) {
				t.Errorf("layout %s: %s: %v, native %v", layout, path, b, a)
				return
			}
			for i := range av {
				walk(fmt.Sprintf("%s[%d]", path, i), av[i], bv[i])
			}
		case float64:
			bv, ok := b.(float64)
			d := math.Abs(av - bv)
			if ok && d > 0 {
				d /= math.Max(math.Abs(av), math.Abs(bv))
			}
			worst = math.Max(worst, d)
			if !ok || d > rel {
				t.Errorf("layout %s: %s = %v, native %v (relative difference %.3g)", layout, path, b, a, d)
			}
		default:
			if a != b {
				t.Errorf("layout %s: %s = %v, native %v", layout, path, b, a)
			}
		}
	}
	walk("metrics", a, b)
	t.Logf("layout %s: largest relative difference from the native figures %.3g", layout, worst)
}

// Auto-detection picks each layout's map, and none for the native layout.
func TestDetectPicksTheLayoutsMap(t *testing.T) {
	maps := simMaps(t)
	spec := sim.DefaultSpec(5)
	spec.DurationS = 120
	var native bytes.Buffer
	if _, err := sim.Generate(spec, &native); err != nil {
		t.Fatal(err)
	}
	if got := telemetry.Detect(native.Bytes(), maps); len(got) != 0 {
		t.Fatalf("native log detected as %s", got[0].Name)
	}
	for i, l := range sim.LogLayouts() {
		var b bytes.Buffer
		if err := l.Rewrite(native.Bytes(), &b); err != nil {
			t.Fatal(err)
		}
		got := telemetry.Detect(b.Bytes()[:min(b.Len(), telemetry.DetectBytes)], maps)
		if len(got) != 1 || got[0] != maps[i] {
			names := []string{}
			for _, m := range got {
				names = append(names, m.Name)
			}
			t.Errorf("layout %s detected as %v, want %s", l.Name, names, maps[i].Name)
		}
	}
	// The maps were built to be told apart: no pair clashes.
	for i := range maps {
		for j := range maps {
			if i != j && maps[i].DetectClash(maps[j]) {
				t.Errorf("maps %s and %s clash", maps[i].Name, maps[j].Name)
			}
		}
	}
}
