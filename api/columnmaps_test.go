package api_test

import (
	"bytes"
	"compress/gzip"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"mime/multipart"
	"net/http/httptest"
	"net/textproto"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/telemetry"
)

type mapBody struct {
	ID      string `json:"id"`
	Name    string `json:"name"`
	Version int    `json:"version"`
}

// createMap posts a column map given as JSON text.
func (e *env) createMap(js []byte) mapBody {
	e.t.Helper()
	r := e.call("POST", "/v1/column-maps", tech, json.RawMessage(js))
	if r.Status != 201 {
		e.t.Fatalf("POST column map: %d %s", r.Status, r.Body)
	}
	var m mapBody
	r.decode(e.t, &m)
	return m
}

// logPart describes the log part of an upload.
type logPart struct {
	name     string // file name; default flight.csv
	encoding string // Content-Encoding of the part
	mapRef   string // the column_map part, when set
	key      string // Idempotency-Key, when set
}

// uploadWith sends a multipart upload with a column_map part and the log
// part's file name and Content-Encoding as given.
func (e *env) uploadWith(flight any, log []byte, lp logPart) *resp {
	e.t.Helper()
	var buf bytes.Buffer
	w := multipart.NewWriter(&buf)
	fj, _ := json.Marshal(flight)
	fw, _ := w.CreateFormField("flight")
	fw.Write(fj)
	if lp.mapRef != "" {
		mw, _ := w.CreateFormField("column_map")
		mw.Write([]byte(lp.mapRef))
	}
	if lp.name == "" {
		lp.name = "flight.csv"
	}
	h := textproto.MIMEHeader{}
	h.Set("Content-Disposition", fmt.Sprintf(`form-data; name="log"; filename=%q`, lp.name))
	h.Set("Content-Type", "text/csv")
	if lp.encoding != "" {
		h.Set("Content-Encoding", lp.encoding)
	}
	lw, _ := w.CreatePart(h)
	lw.Write(log)
	w.Close()
	req := httptest.NewRequest("POST", "/v1/flights", bytes.NewReader(buf.Bytes()))
	req.Header.Set("Content-Type", w.FormDataContentType())
	req.Header.Set("Authorization", "Bearer "+e.tokens[pilot])
	if lp.key != "" {
		req.Header.Set("Idempotency-Key", lp.key)
	}
	rec := httptest.NewRecorder()
	e.h.ServeHTTP(rec, req)
	r := &resp{Status: rec.Code, Header: rec.Header(), Body: rec.Body.Bytes()}
	validate(e.t, req, r)
	return r
}

func gzipped(t *testing.T, b []byte) []byte {
	var buf bytes.Buffer
	w := gzip.NewWriter(&buf)
	w.Write(b)
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// Technicians write column maps, everyone reads them; a change is the next
// version with an ETag, a stale If-Match is 412, each write is audited.
func TestColumnMapRecord(t *testing.T) {
	e := newEnv(t)
	layouts := sim.LogLayouts()
	if r := e.call("POST", "/v1/column-maps", pilot, json.RawMessage(layouts[0].Map)); r.Status != 403 {
		t.Fatalf("pilot creating a map: %d", r.Status)
	}
	m := e.createMap(layouts[0].Map)
	if m.Version != 1 || m.Name != "sim-epoch-us" {
		t.Fatalf("created %+v", m)
	}
	var list struct{ Items []mapBody }
	e.call("GET", "/v1/column-maps", fleet.RoleViewer, nil).decode(t, &list)
	if len(list.Items) != 1 || list.Items[0].ID != m.ID {
		t.Fatalf("list %+v", list)
	}
	got := e.call("GET", "/v1/column-maps/"+m.ID, fleet.RoleViewer, nil)
	if got.Status != 200 || got.Header.Get("ETag") != `"1"` {
		t.Fatalf("get: %d etag %q", got.Status, got.Header.Get("ETag"))
	}
	patch := map[string]any{"detect": []string{"clock_us", "vbus_mV", "ibus_cA"}}
	if r := e.call("PATCH", "/v1/column-maps/"+m.ID, tech, patch, "If-Match", `"1"`); r.Status != 200 || r.Header.Get("ETag") != `"2"` {
		t.Fatalf("patch: %d %s", r.Status, r.Body)
	}
	if r := e.call("PATCH", "/v1/column-maps/"+m.ID, tech, patch, "If-Match", `"1"`); r.Status != 412 {
		t.Fatalf("stale patch: %d", r.Status)
	}
	if r := e.call("PATCH", "/v1/column-maps/"+m.ID, tech, map[string]any{"version": 9}, "If-Match", `"2"`); r.Status != 400 {
		t.Fatalf("patching version: %d", r.Status)
	}
	// The first version is still there, as flights read through it need it.
	var v1 struct {
		Version int      `json:"version"`
		Detect  []string `json:"detect"`
	}
	e.call("GET", "/v1/column-maps/"+m.ID+"?version=1", fleet.RoleViewer, nil).decode(t, &v1)
	if v1.Version != 1 || len(v1.Detect) != 2 {
		t.Fatalf("version 1: %+v", v1)
	}
	if r := e.call("GET", "/v1/column-maps/"+m.ID+"?version=7", fleet.RoleViewer, nil); r.Status != 404 {
		t.Fatalf("version 7: %d", r.Status)
	}
	var audit struct {
		Items []struct {
			Entity string `json:"entity"`
		} `json:"items"`
	}
	e.call("GET", "/v1/audit?entity=column_map&entity_id="+m.ID, admin, nil).decode(t, &audit)
	if len(audit.Items) != 2 {
		t.Fatalf("audit rows %d, want 2 (create, change)", len(audit.Items))
	}
	other := `{"name": "sim-epoch-us", "time": {"column": "T"}, "columns": {"pack_v": {"from": "V"}, "pack_a": {"from": "A"}}}`
	if r := e.call("POST", "/v1/column-maps", tech, json.RawMessage(other)); r.Status != 409 || r.problem(t).Field != "name" {
		t.Fatalf("same name again: %d %s", r.Status, r.Body)
	}
	if r := e.call("DELETE", "/v1/column-maps/"+m.ID, tech, nil, "If-Match", `"2"`); r.Status != 204 {
		t.Fatalf("delete unused map: %d %s", r.Status, r.Body)
	}
}

// Validation at creation: problem+json naming the member; a set of maps
// auto-detection could not tell apart is refused with 422 at creation (and
// on change), not at upload.
func TestColumnMapValidationAndAmbiguity(t *testing.T) {
	e := newEnv(t)
	bad := map[string]string{
		"columns.pack_a":       `{"name": "a", "time": {"column": "T"}, "columns": {"pack_v": {"from": "V"}}}`,
		"columns.volts":        `{"name": "a", "time": {"column": "T"}, "columns": {"pack_v": {"from": "V"}, "pack_a": {"from": "A"}, "volts": {"from": "X"}}}`,
		"columns.pack_a.scale": `{"name": "a", "time": {"column": "T"}, "columns": {"pack_v": {"from": "V"}, "pack_a": {"from": "A", "scale": 0}}}`,
		"columns.pack_v.from":  `{"name": "a", "time": {"column": "T"}, "columns": {"pack_v": {"from": "V"}, "pack_a": {"from": "V"}}}`,
		"time.unit":            `{"name": "a", "time": {"column": "T", "unit": "min"}, "columns": {"pack_v": {"from": "V"}, "pack_a": {"from": "A"}}}`,
		"columns":              `{"name": "a", "time": {"column": "T"}}`,
		"time.column":          `{"name": "a", "columns": {"pack_v": {"from": "V"}, "pack_a": {"from": "A"}}}`,
		"name":                 `{"time": {"column": "T"}, "columns": {"pack_v": {"from": "V"}, "pack_a": {"from": "A"}}}`,
		"columns.rpm_m1":       `{"name": "a", "time": {"column": "T"}, "columns": {"pack_v": {"from": "V"}, "pack_a": {"from": "A"}, "rpm_m1": {"from": "R"}, "rpm_m1": {"from": "S"}}}`,
	}
	for field, js := range bad {
		r := e.call("POST", "/v1/column-maps", tech, json.RawMessage(js))
		if p := r.problem(t); r.Status != 400 || p.Field != field {
			t.Errorf("%s: %d field %q (%s), want 400 naming %s", js, r.Status, p.Field, p.Detail, field)
		}
	}
	first := e.createMap([]byte(`{"name": "export-a", "time": {"column": "Stamp"},
		"columns": {"pack_v": {"from": "Bus V"}, "pack_a": {"from": "Bus A"}, "rpm_m1": {"from": "R1"}}, "detect": ["Stamp", "Bus V"]}`))
	// Another export whose header holds every detect name of the first.
	r := e.call("POST", "/v1/column-maps", tech, json.RawMessage(`{"name": "export-b", "time": {"column": "Stamp"},
		"columns": {"pack_v": {"from": "Bus V"}, "pack_a": {"from": "Bus I"}}, "detect": ["Stamp", "Bus I"]}`))
	if p := r.problem(t); r.Status != 422 || p.Field != "detect" || !strings.Contains(p.Detail, "export-a") {
		t.Fatalf("ambiguous map: %d %+v", r.Status, p)
	}
	// The same layout with another delimiter can be told apart.
	e.createMap([]byte(`{"name": "export-a-semicolon", "delimiter": ";", "time": {"column": "Stamp"},
		"columns": {"pack_v": {"from": "Bus V"}, "pack_a": {"from": "Bus A"}}, "detect": ["Stamp", "Bus V"]}`))
	second := e.createMap([]byte(`{"name": "export-c", "time": {"column": "Clock"},
		"columns": {"pack_v": {"from": "Volt"}, "pack_a": {"from": "Amp"}}, "detect": ["Clock", "Volt"]}`))
	r = e.call("PATCH", "/v1/column-maps/"+second.ID, tech, map[string]any{"detect": []string{"Stamp"}}, "If-Match", `"1"`)
	if p := r.problem(t); r.Status != 422 || p.Field != "detect" {
		t.Fatalf("ambiguous change: %d %+v", r.Status, p)
	}
	if r := e.call("GET", "/v1/column-maps/"+first.ID, fleet.RoleViewer, nil); r.Status != 200 {
		t.Fatalf("get: %d", r.Status)
	}
}

// Uploads: a foreign layout is read through the map its header selects (or
// the one named), the response says which, and the figures are the native
// log's; the native layout stays the default; gzip uploads are read as
// their text and stored as uploaded; refusals name the line and source
// column, and nothing is written.
func TestUploadThroughColumnMap(t *testing.T) {
	e := newEnv(t)
	a, pk, spec := e.simFleet()
	layouts := sim.LogLayouts()
	var maps []mapBody
	for _, l := range layouts {
		maps = append(maps, e.createMap(l.Map))
	}
	var native bytes.Buffer
	if _, err := sim.Generate(spec, &native); err != nil {
		t.Fatal(err)
	}
	var foreign bytes.Buffer
	if err := layouts[0].Rewrite(native.Bytes(), &foreign); err != nil {
		t.Fatal(err)
	}
	flight := map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "packs": []string{pk.ID},
		"site_elevation_m": spec.SiteElevationM}

	// A refusal names line and source column; nothing is written.
	lines := bytes.Split(foreign.Bytes(), []byte("\n"))
	fields := bytes.Split(lines[5], []byte(","))
	fields[2] = []byte(`"1,2"`)
	lines[5] = bytes.Join(fields, []byte(","))
	r := e.uploadWith(flight, bytes.Join(lines, []byte("\n")), logPart{})
	if p := r.problem(t); r.Status != 422 || p.Line != 6 || p.Column != "ibus_cA" ||
		p.Field != "line 6, column ibus_cA (maps to pack_a)" || p.Detail != `value "1,2" is not a number` {
		t.Fatalf("refusal: %d %+v", r.Status, p)
	}
	r = e.uploadWith(flight, foreign.Bytes(), logPart{mapRef: "no-such-map"})
	if p := r.problem(t); r.Status != 422 || p.Field != "column_map" {
		t.Fatalf("unknown map: %d %+v", r.Status, p)
	}
	r = e.uploadWith(flight, foreign.Bytes(), logPart{mapRef: "native"})
	if p := r.problem(t); r.Status != 422 || p.Line != 1 {
		t.Fatalf("a foreign log forced through the native layout: %d %+v", r.Status, p)
	}
	for _, table := range []string{"flights", "flight_logs", "flight_metrics", "events"} {
		var n int
		if err := e.db.Pool().QueryRow(context.Background(), `SELECT count(*) FROM `+table).Scan(&n); err != nil {
			t.Fatal(err)
		}
		if n != 0 {
			t.Fatalf("%s has %d rows after refused uploads", table, n)
		}
	}

	// Auto-detected, gzip-compressed by Content-Encoding.
	r = e.uploadWith(flight, gzipped(t, foreign.Bytes()), logPart{encoding: "gzip"})
	if r.Status != 201 {
		t.Fatalf("upload: %d %s", r.Status, r.Body)
	}
	var d struct {
		ID  string `json:"id"`
		Log struct {
			ColumnMap *mapBody `json:"column_map"`
			Bytes     int      `json:"bytes"`
		} `json:"log"`
		Metrics json.RawMessage `json:"metrics"`
	}
	r.decode(t, &d)
	if cm := d.Log.ColumnMap; cm == nil || cm.ID != maps[0].ID || cm.Version != 1 || cm.Name != "sim-epoch-us" {
		t.Fatalf("column map used: %+v", d.Log.ColumnMap)
	}
	if d.Log.Bytes != foreign.Len() {
		t.Fatalf("log bytes %d, the text has %d", d.Log.Bytes, foreign.Len())
	}
	// Same figures as the native log analysed with the same facts.
	var want, got map[string]any
	json.Unmarshal(d.Metrics, &got)
	nl, err := telemetry.Parse(bytes.NewReader(native.Bytes()), telemetry.Limits{})
	if err != nil {
		t.Fatal(err)
	}
	wm, err := telemetry.Analyze(nl, telemetry.Params{MassKg: 1.5, RotorDiameterM: 0.254, Rotors: 4, CellsS: 4,
		Chemistry: fleet.LiPo, RatedMah: spec.Packs[0].RatedMah, CRating: 25, SiteElevationM: spec.SiteElevationM})
	if err != nil {
		t.Fatal(err)
	}
	raw, _ := json.Marshal(wm)
	json.Unmarshal(raw, &want)
	for _, k := range []string{"charge_mah", "energy_wh", "ir_mohm", "thrust_k", "hover_rpm", "max_alt_m", "distance_m", "landing_g"} {
		w, g := want[k].(float64), got[k].(float64)
		if math.Abs(w-g) > 1e-9*math.Abs(w) {
			t.Errorf("%s = %v through the map, %v from the native log", k, g, w)
		}
	}
	// The stored log is the upload's text; the same text plain is the same flight.
	back := e.call("GET", "/v1/flights/"+d.ID+"/log", fleet.RoleViewer, nil)
	if !bytes.Equal(back.Body, foreign.Bytes()) {
		t.Fatalf("stored log differs from the upload's text")
	}
	r = e.uploadWith(flight, foreign.Bytes(), logPart{mapRef: maps[0].Name})
	var d2 struct {
		ID string `json:"id"`
	}
	r.decode(t, &d2)
	if r.Status != 200 || d2.ID != d.ID {
		t.Fatalf("the same log plain: %d %s, want 200 with flight %s", r.Status, r.Body, d.ID)
	}
	r = e.uploadWith(flight, foreign.Bytes(), logPart{mapRef: maps[0].ID})
	if r.decode(t, &d2); r.Status != 200 || d2.ID != d.ID {
		t.Fatalf("the same log, map named by id: %d %s", r.Status, r.Body)
	}
	var stored []byte
	if err := e.db.Pool().QueryRow(context.Background(), `SELECT raw_gz FROM flight_logs WHERE flight_id = $1`, d.ID).Scan(&stored); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(stored, gzipped(t, foreign.Bytes())) {
		t.Fatalf("a gzip upload is not stored as uploaded")
	}
	// Re-analysis re-reads the log through the map's version it was read
	// through: a later change to the map (here the current's scale doubled)
	// does not reach the flight.
	var cur map[string]any
	e.call("GET", "/v1/column-maps/"+maps[0].ID, fleet.RoleViewer, nil).decode(t, &cur)
	cols := cur["columns"].(map[string]any)
	cols["pack_a"] = map[string]any{"from": "ibus_cA", "scale": 0.02}
	if r := e.call("PATCH", "/v1/column-maps/"+maps[0].ID, tech, map[string]any{"columns": cols}, "If-Match", `"1"`); r.Status != 200 {
		t.Fatalf("patch: %d %s", r.Status, r.Body)
	}
	ctx := store.WithActor(context.Background(), store.Actor{Name: "test"})
	if n, err := (&ingest.Ingester{DB: e.db}).Reanalyze(ctx, true, nil); err != nil || n != 1 {
		t.Fatalf("reanalyze: %d %v", n, err)
	}
	var after struct {
		Log struct {
			ColumnMap mapBody `json:"column_map"`
		} `json:"log"`
		Metrics struct {
			ChargeMah float64 `json:"charge_mah"`
		} `json:"metrics"`
	}
	e.call("GET", "/v1/flights/"+d.ID, fleet.RoleViewer, nil).decode(t, &after)
	if after.Log.ColumnMap.Version != 1 || after.Metrics.ChargeMah != got["charge_mah"].(float64) {
		t.Fatalf("after re-analysis: map version %d, charge %v (was %v)", after.Log.ColumnMap.Version,
			after.Metrics.ChargeMah, got["charge_mah"])
	}
	// A map a flight was read through cannot be deleted.
	if r := e.call("DELETE", "/v1/column-maps/"+maps[0].ID, tech, nil, "If-Match", `"2"`); r.Status != 409 {
		t.Fatalf("deleting a used map: %d %s", r.Status, r.Body)
	}
}

// A small gzip upload that inflates past the server's byte limit is refused
// with 422 and nothing is written; a .csv.gz file name marks gzip too.
func TestUploadGzipLimits(t *testing.T) {
	e := newEnv(t)
	a, pk, _ := e.simFleet()
	var b strings.Builder
	b.WriteString("t_s,pack_v,pack_a\n")
	for i := range 200_000 {
		fmt.Fprintf(&b, "%d,16.8,1.5\n", i)
	}
	text := []byte(b.String()) // about 2.6 MB
	small := e.withLimits(1_000_000, 1<<20)
	comp := gzipped(t, text)
	if len(comp) > 1<<20 {
		t.Fatalf("the compressed log (%d bytes) is over the upload limit itself", len(comp))
	}
	flight := map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "packs": []string{pk.ID},
		"takeoff_at": "2026-05-04T09:30:00Z", "landing_at": "2026-05-04T09:31:00Z"}
	r := small.uploadWith(flight, comp, logPart{name: "flight-7.csv.gz"})
	if p := r.problem(t); r.Status != 422 || !strings.Contains(p.Detail, "larger than the limit") {
		t.Fatalf("gzip past the byte limit: %d %+v", r.Status, p)
	}
	rows := e.withLimits(1000, 64<<20)
	r = rows.uploadWith(flight, comp, logPart{encoding: "gzip"})
	if p := r.problem(t); r.Status != 422 || p.Line != 1002 {
		t.Fatalf("gzip past the row limit: %d %+v", r.Status, p)
	}
	r = e.uploadWith(flight, text[:100], logPart{encoding: "br"})
	if p := r.problem(t); r.Status != 400 || p.Field != "log" {
		t.Fatalf("unsupported encoding: %d %+v", r.Status, p)
	}
	var n int
	if err := e.db.Pool().QueryRow(context.Background(), `SELECT count(*) FROM flights`).Scan(&n); err != nil || n != 0 {
		t.Fatalf("%d flights after refusals (%v)", n, err)
	}
	// An Idempotency-Key retry must be the same upload: the same bytes
	// declared gzip are another request (422), not a replay of the first.
	first := e.uploadWith(flight, text[:200], logPart{key: "gz-ik"})
	again := e.uploadWith(flight, text[:200], logPart{key: "gz-ik", encoding: "gzip"})
	if p := again.problem(t); first.Status != 201 || again.Status != 422 || p.Field != "Idempotency-Key" {
		t.Fatalf("retry with another encoding: %d then %d %+v", first.Status, again.Status, p)
	}
}
