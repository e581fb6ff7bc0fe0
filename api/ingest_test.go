package api_test

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// upload sends a multipart flight upload through the real router.
func (e *env) upload(flight any, log []byte, role fleet.Role) *resp {
	e.t.Helper()
	body, ct := multipartBody(e.t, flight, log)
	req := httptest.NewRequest("POST", "/v1/flights", bytes.NewReader(body))
	req.Header.Set("Content-Type", ct)
	req.Header.Set("Authorization", "Bearer "+e.tokens[role])
	rec := httptest.NewRecorder()
	e.h.ServeHTTP(rec, req)
	r := &resp{Status: rec.Code, Header: rec.Header(), Body: rec.Body.Bytes()}
	validate(e.t, req, r)
	return r
}

func multipartBody(t *testing.T, flight any, log []byte) ([]byte, string) {
	var buf bytes.Buffer
	w := multipart.NewWriter(&buf)
	fj, _ := json.Marshal(flight)
	fw, _ := w.CreateFormField("flight")
	fw.Write(fj)
	if log != nil {
		lw, _ := w.CreateFormFile("log", "flight.csv")
		lw.Write(log)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes(), w.FormDataContentType()
}

// simFleet registers the simulator's default quad and its pack.
func (e *env) simFleet() (idBody, idBody, sim.FlightSpec) {
	spec := sim.DefaultSpec(7)
	spec.Start = time.Now().Add(-3 * time.Hour).UTC().Truncate(time.Second)
	spec.DurationS = 240
	a := e.create("/v1/airframes", map[string]any{"code": spec.Airframe, "layout": "quad-x", "cells_s": 4,
		"rotor_diameter_mm": 254, "empty_mass_g": 1000})
	p := spec.Packs[0]
	pack := e.create("/v1/parts", map[string]any{"kind": "pack", "serial": p.Serial, "mass_g": 500,
		"specs": map[string]any{"chemistry": "lipo", "cells_s": p.CellsS, "cells_p": p.CellsP, "rated_mah": p.RatedMah, "c_rating": 25}})
	e.fitQuad(a, "S", "", time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC))
	return a, pack, spec
}

func genLog(t *testing.T, spec sim.FlightSpec) ([]byte, sim.Truth) {
	var buf bytes.Buffer
	truth, err := sim.Generate(spec, &buf)
	if err != nil {
		t.Fatal(err)
	}
	return buf.Bytes(), truth
}

type flightDetail struct {
	ID        string    `json:"id"`
	Source    string    `json:"source"`
	TakeoffAt time.Time `json:"takeoff_at"`
	LandingAt time.Time `json:"landing_at"`
	Packs     []struct {
		Serial string `json:"serial"`
	} `json:"packs"`
	Log *struct {
		Samples        int      `json:"samples"`
		UnknownColumns []string `json:"unknown_columns"`
	} `json:"log"`
	Metrics *struct {
		ChargeMah float64  `json:"charge_mah"`
		ThrustK   *float64 `json:"thrust_k"`
	} `json:"metrics"`
	MotorRuns []struct {
		Position    string  `json:"position"`
		Revolutions float64 `json:"revolutions"`
	} `json:"motor_runs"`
	Events []struct{ Kind string } `json:"events"`
}

// An upload whose airframe, times and packs come from the log's metadata:
// one transaction writes the flight with its figures; the same log again
// returns the same flight with 200; the stored log reads back unchanged.
func TestUploadLogIdempotent(t *testing.T) {
	e := newEnv(t)
	_, _, spec := e.simFleet()
	log, truth := genLog(t, spec)
	r := e.upload(map[string]any{"pilot": "test pilot", "site_elevation_m": spec.SiteElevationM}, log, pilot)
	if r.Status != 201 {
		t.Fatalf("upload: %d %s", r.Status, r.Body)
	}
	var d flightDetail
	r.decode(t, &d)
	if d.Source != "log" || d.Log == nil || d.Metrics == nil || len(d.MotorRuns) != 4 || len(d.Packs) != 1 {
		t.Fatalf("detail %s", r.Body)
	}
	// Take-off and landing follow the log (simulator truth offsets; the
	// analysis finds the airborne span from rotor speeds to within a sample or two).
	wantTO := spec.Start.Add(time.Duration(truth.TakeoffOffsetS * float64(time.Second)))
	if dt := d.TakeoffAt.Sub(wantTO); dt < -2*time.Second || dt > 2*time.Second {
		t.Fatalf("take-off %s, simulator says %s", d.TakeoffAt, wantTO)
	}
	if rel := d.Metrics.ChargeMah/truth.ChargeMah - 1; rel > 0.005 || rel < -0.005 {
		t.Fatalf("charge %.1f mAh, simulator truth %.1f", d.Metrics.ChargeMah, truth.ChargeMah)
	}
	if d.Metrics.ThrustK == nil {
		t.Fatal("thrust_k is null though mass (empty + pack) and rotor data are known")
	}
	again := e.upload(map[string]any{"pilot": "test pilot"}, log, pilot)
	var d2 flightDetail
	again.decode(t, &d2)
	if again.Status != 200 || d2.ID != d.ID {
		t.Fatalf("re-upload: %d id %s, want 200 id %s", again.Status, d2.ID, d.ID)
	}
	raw := e.call("GET", "/v1/flights/"+d.ID+"/log", fleet.RoleViewer, nil)
	if raw.Status != 200 || !bytes.Equal(raw.Body, log) {
		t.Fatalf("stored log differs from the upload (%d, %d vs %d bytes)", raw.Status, len(raw.Body), len(log))
	}
	got := e.call("GET", "/v1/flights/"+d.ID, fleet.RoleViewer, nil)
	var d3 flightDetail
	got.decode(t, &d3)
	if len(d3.MotorRuns) != 4 || d3.Metrics == nil {
		t.Fatalf("GET flight: %s", got.Body)
	}
	// The pack's history counts the flight.
	var h struct {
		Totals struct{ Flights int } `json:"totals"`
	}
	packID := ""
	var parts struct {
		Items []struct{ ID string } `json:"items"`
	}
	e.call("GET", "/v1/parts?kind=pack", fleet.RoleViewer, nil).decode(t, &parts)
	packID = parts.Items[0].ID
	e.call("GET", "/v1/parts/"+packID+"/history", fleet.RoleViewer, nil).decode(t, &h)
	if h.Totals.Flights != 1 {
		t.Fatalf("pack history %d flights, want 1", h.Totals.Flights)
	}
}

// The same upload 20 times at once: one flight, every answer names it.
func TestConcurrentSameUploadOneFlight(t *testing.T) {
	e := newEnv(t)
	_, _, spec := e.simFleet()
	log, _ := genLog(t, spec)
	srv := httptest.NewServer(e.h)
	defer srv.Close()
	body, ct := multipartBody(t, map[string]any{"pilot": "test pilot"}, log)
	const n = 20
	var wg sync.WaitGroup
	ids, codes := make([]string, n), make([]int, n)
	start := make(chan struct{})
	for i := 0; i < n; i++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			req, _ := http.NewRequest("POST", srv.URL+"/v1/flights", bytes.NewReader(body))
			req.Header.Set("Content-Type", ct)
			req.Header.Set("Authorization", "Bearer "+e.tokens[pilot])
			<-start
			res, err := http.DefaultClient.Do(req)
			if err != nil {
				t.Error(err)
				return
			}
			defer res.Body.Close()
			var d flightDetail
			json.NewDecoder(res.Body).Decode(&d)
			ids[i], codes[i] = d.ID, res.StatusCode
		}()
	}
	close(start)
	wg.Wait()
	created := 0
	for i := range codes {
		if codes[i] == 201 {
			created++
		} else if codes[i] != 200 {
			t.Fatalf("upload %d: status %d", i, codes[i])
		}
		if ids[i] != ids[0] {
			t.Fatalf("uploads answered with different flights: %v", ids)
		}
	}
	var count int
	if err := e.db.Pool().QueryRow(context.Background(), `SELECT count(*) FROM flights`).Scan(&count); err != nil {
		t.Fatal(err)
	}
	if created != 1 || count != 1 {
		t.Fatalf("%d created answers, %d flights; want 1 and 1", created, count)
	}
}

// Every refusal of a bad log names the physical line and the column, and
// nothing is written.
func TestUploadRefusalsWriteNothing(t *testing.T) {
	e := newEnv(t)
	a, pk, _ := e.simFleet()
	good := "# start: 2026-05-04T09:30:00Z\nt_s,pack_v,pack_a\n0,16.8,0.5\n1,16.7,10\n2,16.6,10\n"
	cases := []struct {
		name, log string
		line      int
		column    string
	}{
		{"missing required column", "# start: 2026-05-04T09:30:00Z\nt_s,pack_v\n0,16.8\n", 2, "pack_a"},
		{"non-numeric", "t_s,pack_v,pack_a\n0,16.8,0.5\n# note\n1,sixteen,10\n", 4, "pack_v"},
		{"NaN", "t_s,pack_v,pack_a\n0,16.8,NaN\n", 2, "pack_a"},
		{"Inf", "t_s,pack_v,pack_a\n0,+Inf,0.5\n", 2, "pack_v"},
		{"time not increasing", "t_s,pack_v,pack_a\r\n0,16.8,0.5\r\n1,16.7,10\r\n1,16.6,10\r\n", 4, "t_s"},
		{"time going back", "pack_a,t_s,pack_v\n0.5,0,16.8\n10,2,16.7\n10,1.5,16.6\n", 4, "t_s"},
	}
	for _, c := range cases {
		r := e.upload(map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "packs": []string{pk.ID},
			"takeoff_at": "2026-05-04T09:30:00Z", "landing_at": "2026-05-04T09:30:01Z"}, []byte(c.log), pilot)
		p := r.problem(t)
		if r.Status != 422 || p.Line != c.line || p.Column != c.column {
			t.Errorf("%s: %d line %d column %q (%s), want 422 line %d column %q", c.name, r.Status, p.Line, p.Column, p.Detail, c.line, c.column)
		}
	}
	// The row and byte limits: a server with small limits refuses a larger log.
	small := e.withLimits(3, 1<<20)
	r := small.upload(map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "packs": []string{pk.ID}},
		[]byte(good+"3,16.5,10\n"), pilot)
	if p := r.problem(t); r.Status != 422 || p.Line != 6 {
		t.Errorf("row limit: %d %+v", r.Status, p)
	}
	tiny := e.withLimits(1000, 40)
	r = tiny.upload(map[string]any{"airframe_id": a.ID, "pilot": "test pilot"}, []byte(good), pilot)
	if p := r.problem(t); r.Status != 422 || p.Field != "log" {
		t.Errorf("byte limit: %d %+v", r.Status, p)
	}
	// Missing parts and a bad flight part.
	r = e.upload(map[string]any{"airframe_id": a.ID, "pilot": "test pilot"}, nil, pilot)
	if p := r.problem(t); r.Status != 400 || p.Field != "log" {
		t.Errorf("no log part: %d %+v", r.Status, p)
	}
	r = e.upload(map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "colour": "red"}, []byte(good), pilot)
	if p := r.problem(t); r.Status != 400 || p.Field != "colour" {
		t.Errorf("unknown member in flight part: %d %+v", r.Status, p)
	}
	r = e.upload(map[string]any{"pilot": "test pilot"}, []byte(good), pilot)
	if p := r.problem(t); r.Status != 400 || p.Field != "airframe_id" {
		t.Errorf("no airframe anywhere: %d %+v", r.Status, p)
	}
	r = e.upload(map[string]any{"pilot": "test pilot"}, []byte("# airframe: NOPE-9\n"+good[strings.Index(good, "\n")+1:]), pilot)
	if p := r.problem(t); r.Status != 422 || p.Field != "airframe_id" {
		t.Errorf("unknown airframe in metadata: %d %+v", r.Status, p)
	}
	for _, table := range []string{"flights", "flight_packs", "flight_logs", "flight_metrics", "motor_runs", "events"} {
		var n int
		if err := e.db.Pool().QueryRow(context.Background(), fmt.Sprintf(`SELECT count(*) FROM %s`, table)).Scan(&n); err != nil {
			t.Fatal(err)
		}
		if n != 0 {
			t.Errorf("%s has %d rows after refused uploads", table, n)
		}
	}
	// The good log is accepted, with its times from the flight part.
	r = e.upload(map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "packs": []string{pk.ID},
		"takeoff_at": "2026-05-04T09:30:00.5Z", "landing_at": "2026-05-04T09:30:01.5Z"}, []byte(good), pilot)
	if r.Status != 201 {
		t.Fatalf("good log: %d %s", r.Status, r.Body)
	}
}

// A planted hard landing opens a detected event on the flight.
func TestUploadDetectsHardLanding(t *testing.T) {
	e := newEnv(t)
	_, _, spec := e.simFleet()
	spec.LandingG = 3.5
	log, _ := genLog(t, spec)
	r := e.upload(map[string]any{"pilot": "test pilot"}, log, pilot)
	var d flightDetail
	r.decode(t, &d)
	kinds := []string{}
	for _, ev := range d.Events {
		kinds = append(kinds, ev.Kind)
	}
	if r.Status != 201 || len(kinds) != 1 || kinds[0] != "hard_landing" {
		t.Fatalf("events %v (status %d), want one hard_landing", kinds, r.Status)
	}
}

// A flight on two packs in parallel: GET /v1/flights/{id} returns each
// pack's share (metrics.packs) and the per-cell minima (metrics.min_cells_v),
// valid against the document. Equal shares by definition (one pack_a for
// the bus): half the charge and energy each, the bus resistance times two.
// Against the simulator's truth: two packs of the same age split the load
// within their cell scatter (CellSpread 1 %), so each pack's charge is
// within 3 % of the truth's split, and each pack's resistance within the
// 10 % resistance acceptance of its own.
func TestFlightReturnsPackFigures(t *testing.T) {
	e := newEnv(t)
	spec := sim.DefaultSpec(9)
	spec.Start = time.Now().Add(-3 * time.Hour).UTC().Truncate(time.Second)
	spec.DurationS, spec.Airframe = 240, "SIM-2P"
	p := spec.Packs[0]
	p.RatedMah = 4000
	q := p
	p.Serial, q.Serial = "SIM-2P-A", "SIM-2P-B"
	spec.Packs = []sim.PackState{p, q}
	a := e.create("/v1/airframes", map[string]any{"code": spec.Airframe, "layout": "quad-x", "cells_s": 4,
		"packs_per_flight": 2, "rotor_diameter_mm": 254, "empty_mass_g": 1000})
	var ids []string
	for _, ps := range spec.Packs {
		pk := e.create("/v1/parts", map[string]any{"kind": "pack", "serial": ps.Serial, "mass_g": 250,
			"specs": map[string]any{"chemistry": "lipo", "cells_s": ps.CellsS, "cells_p": ps.CellsP, "rated_mah": ps.RatedMah, "c_rating": 25}})
		ids = append(ids, pk.ID)
	}
	e.fitQuad(a, "T", "", time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC))
	log, truth := genLog(t, spec)
	r := e.upload(map[string]any{"pilot": "test pilot", "packs": ids, "site_elevation_m": spec.SiteElevationM,
		"override_reason": "bench flight"}, log, pilot)
	if r.Status != 201 {
		t.Fatalf("upload: %d %s", r.Status, r.Body)
	}
	var created struct{ ID string }
	r.decode(t, &created)
	var d struct {
		Metrics struct {
			ChargeMah     float64   `json:"charge_mah"`
			EnergyWh      float64   `json:"energy_wh"`
			MinPackV      float64   `json:"min_pack_v"`
			IRMohm        *float64  `json:"ir_mohm"`
			MinCellsV     []float64 `json:"min_cells_v"`
			MeanPowerW    float64   `json:"mean_power_w"`
			LogMeanPowerW float64   `json:"log_mean_power_w"`
			Packs         []struct {
				PartID        string    `json:"part_id"`
				Serial        string    `json:"serial"`
				Slot          int       `json:"slot"`
				Share         float64   `json:"share"`
				ChargeMah     float64   `json:"charge_mah"`
				EnergyWh      float64   `json:"energy_wh"`
				MinCellV      *float64  `json:"min_cell_v"`
				MinCellSource string    `json:"min_cell_source"`
				MinCellsV     []float64 `json:"min_cells_v"`
				IRmOhm        *float64  `json:"ir_mohm"`
			} `json:"packs"`
		} `json:"metrics"`
	}
	e.call("GET", "/v1/flights/"+created.ID, fleet.RoleViewer, nil).decode(t, &d)
	m := d.Metrics
	if len(m.MinCellsV) != 4 || len(m.Packs) != 2 || m.IRMohm == nil {
		t.Fatalf("metrics: %d cell minima, %d packs, ir %v", len(m.MinCellsV), len(m.Packs), m.IRMohm)
	}
	for j, pk := range m.Packs {
		t.Logf("pack %s: share %.2f, %.1f mAh (truth %.1f), %.2f Wh, min cell %.3f V (%s), %.1f mOhm (truth %.1f)",
			pk.Serial, pk.Share, pk.ChargeMah, truth.Packs[j].ChargeMah, pk.EnergyWh, *pk.MinCellV, pk.MinCellSource,
			*pk.IRmOhm, truth.Packs[j].IRmOhm)
		if pk.PartID != ids[j] || pk.Serial != spec.Packs[j].Serial || pk.Slot != j+1 || pk.Share != 0.5 ||
			pk.ChargeMah != m.ChargeMah/2 || pk.EnergyWh != m.EnergyWh/2 || *pk.IRmOhm != 2**m.IRMohm {
			t.Errorf("pack %d figures %+v, bus charge %v energy %v ir %v", j, pk, m.ChargeMah, m.EnergyWh, *m.IRMohm)
		}
		if rel := pk.ChargeMah/truth.Packs[j].ChargeMah - 1; rel > 0.03 || rel < -0.03 {
			t.Errorf("pack %d charge %.1f mAh, simulator's split %.1f", j, pk.ChargeMah, truth.Packs[j].ChargeMah)
		}
		if rel := *pk.IRmOhm/truth.Packs[j].IRmOhm - 1; rel > 0.10 || rel < -0.10 {
			t.Errorf("pack %d resistance %.2f mOhm, simulator %.2f", j, *pk.IRmOhm, truth.Packs[j].IRmOhm)
		}
	}
	// The cell columns are the first pack's; the second pack's minimum is
	// the bus minimum over its 4 cells.
	a0, a1 := m.Packs[0], m.Packs[1]
	if a0.MinCellSource != "cells" || len(a0.MinCellsV) != 4 || a1.MinCellSource != "pack_v/cells_s" ||
		*a1.MinCellV != m.MinPackV/4 || len(a1.MinCellsV) != 0 {
		t.Errorf("pack cell minima: %+v / %+v", a0, a1)
	}
	if !(m.LogMeanPowerW < m.MeanPowerW) {
		t.Errorf("mean power %v (airborne) vs %v (whole log)", m.MeanPowerW, m.LogMeanPowerW)
	}
}
