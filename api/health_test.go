package api_test

import (
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// The health routes through the real router, validated against the document:
// a pack charged full and left is on watch for storage; a propeller strike
// makes replacement due at once; motors get a bearing view after a logged
// flight; the airframe's trends answer.
func TestHealthRoutes(t *testing.T) {
	e := newEnv(t)
	a, pack, spec := e.simFleet()
	spec.Start = time.Now().Add(-6 * 24 * time.Hour).UTC().Truncate(time.Second)
	// The motors and propellers simFleet fitted.
	var motors, props []idBody
	var parts struct {
		Items []struct {
			ID     string `json:"id"`
			Kind   string `json:"kind"`
			Serial string `json:"serial"`
		} `json:"items"`
	}
	e.call("GET", "/v1/parts?limit=100", fleet.RoleViewer, nil).decode(t, &parts)
	for _, p := range parts.Items {
		switch p.Kind {
		case "motor":
			motors = append(motors, idBody{ID: p.ID})
		case "propeller":
			props = append(props, idBody{ID: p.ID})
		}
	}
	log, _ := genLog(t, spec)
	if r := e.upload(map[string]any{"pilot": "test pilot", "takeoff_mass_g": 1500}, log, pilot); r.Status != 201 {
		t.Fatalf("upload: %d %s", r.Status, r.Body)
	}
	var hv struct {
		Status string `json:"status"`
		Motor  *struct {
			Mode             string  `json:"mode"`
			ConsumedFraction float64 `json:"consumed_fraction"`
			Flights          int     `json:"flights"`
			Series           []any   `json:"series"`
		} `json:"motor"`
		Pack *struct {
			Cycles       float64                 `json:"cycles"`
			DaysHeldFull float64                 `json:"days_held_full"`
			Reasons      []struct{ Code string } `json:"reasons"`
		} `json:"pack"`
		Propeller *struct {
			Revolutions float64 `json:"revolutions"`
			ReplaceNow  bool    `json:"replace_now"`
		} `json:"propeller"`
	}
	e.call("GET", "/v1/parts/"+motors[0].ID+"/health", fleet.RoleViewer, nil).decode(t, &hv)
	if hv.Motor == nil || hv.Motor.Mode != "relative" || hv.Motor.Flights != 1 || hv.Motor.ConsumedFraction <= 0 || len(hv.Motor.Series) != 1 {
		t.Fatalf("motor health %+v", hv.Motor)
	}
	// A charge to 4.2 V per cell five days ago, after the flight, none since: storage warning.
	r := e.call("POST", "/v1/parts/"+pack.ID+"/checks", pilot, map[string]any{"kind": "charge", "mah_in": 2000,
		"at": time.Now().Add(-5 * 24 * time.Hour).UTC(), "rest_v_after": 16.8, "cell_v": []float64{4.2, 4.2, 4.19, 4.2}})
	if r.Status != 201 {
		t.Fatalf("check: %d %s", r.Status, r.Body)
	}
	hv.Pack = nil
	e.call("GET", "/v1/parts/"+pack.ID+"/health", fleet.RoleViewer, nil).decode(t, &hv)
	if hv.Status != "watch" || hv.Pack == nil || hv.Pack.DaysHeldFull < 4.9 || hv.Pack.Cycles <= 0 {
		t.Fatalf("pack health %s %+v", hv.Status, hv.Pack)
	}
	codes := []string{}
	for _, rs := range hv.Pack.Reasons {
		codes = append(codes, rs.Code)
	}
	if len(codes) != 1 || codes[0] != "stored_full" {
		t.Fatalf("pack reasons %v, want [stored_full]", codes)
	}
	// A bad check names its field; a check on a motor is refused.
	if r := e.call("POST", "/v1/parts/"+pack.ID+"/checks", pilot, map[string]any{"kind": "charge", "mah_in": 100,
		"cell_v": []float64{4.2, 4.2}}); r.Status != 400 || r.problem(t).Field != "cell_v" {
		t.Fatalf("bad cell count: %d %s", r.Status, r.Body)
	}
	if r := e.call("POST", "/v1/parts/"+motors[0].ID+"/checks", pilot, map[string]any{"kind": "storage"}); r.Status != 422 {
		t.Fatalf("check on a motor: %d", r.Status)
	}
	// Propeller: revolutions since fitted; a strike makes replacement due at once.
	hv.Propeller = nil
	e.call("GET", "/v1/parts/"+props[1].ID+"/health", fleet.RoleViewer, nil).decode(t, &hv)
	if hv.Propeller == nil || hv.Propeller.Revolutions <= 0 || hv.Propeller.ReplaceNow {
		t.Fatalf("propeller before strike %s %+v", hv.Status, hv.Propeller)
	}
	if r := e.call("POST", "/v1/events", pilot, map[string]any{"kind": "prop_strike", "part_id": props[1].ID,
		"airframe_id": a.ID, "detail": "tip touched long grass"}); r.Status != 201 {
		t.Fatalf("strike: %d %s", r.Status, r.Body)
	}
	e.call("GET", "/v1/parts/"+props[1].ID+"/health", fleet.RoleViewer, nil).decode(t, &hv)
	if hv.Status != "replace" || !hv.Propeller.ReplaceNow {
		t.Fatalf("propeller after strike %s %+v", hv.Status, hv.Propeller)
	}
	e.call("GET", "/v1/parts/"+props[0].ID+"/health", fleet.RoleViewer, nil).decode(t, &hv)
	if hv.Propeller.ReplaceNow {
		t.Fatal("a strike on m2's propeller made m1's due")
	}
	var tr struct {
		Flights int  `json:"flights"`
		Flagged bool `json:"flagged"`
	}
	if r := e.call("GET", "/v1/airframes/"+a.ID+"/trends", fleet.RoleViewer, nil); r.Status != 200 {
		t.Fatalf("trends: %d %s", r.Status, r.Body)
	} else {
		r.decode(t, &tr)
	}
	if tr.Flights != 1 || tr.Flagged {
		t.Fatalf("trends %+v", tr)
	}
	if r := e.call("GET", "/v1/parts/"+pack.ID+"/checks", fleet.RoleViewer, nil); r.Status != 200 {
		t.Fatalf("list checks: %d", r.Status)
	}
}
