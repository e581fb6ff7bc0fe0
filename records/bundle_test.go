package records_test

import (
	"archive/zip"
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/records"
	"github.com/rotorwright/rotorwright/store"
)

// smallFleet is an airframe with a motor swapped once, a flight controller
// updated, flights, an event, and an inspection that found a discrepancy.
func smallFleet(t testing.TB, db *store.DB) *fleet.Airframe {
	ctx := store.WithActor(context.Background(), store.Actor{Name: "test", Method: "TEST"})
	must := func(err error) {
		if err != nil {
			t.Fatal(err)
		}
	}
	a, err := db.CreateAirframe(ctx, &fleet.Airframe{Code: "RB-1", Model: "Surveyor 4", Layout: "quad-x", CellsS: 6, PacksPerFlight: 1})
	must(err)
	t0 := time.Now().UTC().Add(-30 * 24 * time.Hour).Truncate(time.Second)
	var motors []*fleet.Part
	for i, rot := range []string{"ccw", "cw", "ccw", "cw", "ccw"} {
		spec, _ := json.Marshal(map[string]any{"rotation": rot, "kv": 400})
		m, err := db.CreatePart(ctx, &fleet.Part{Kind: fleet.KindMotor, Serial: fmt.Sprintf("RB-M%d", i+1), PartNumber: "MT-4010",
			Specs: spec, Notes: "=cmd|' /C calc'!A0"})
		must(err)
		motors = append(motors, m)
	}
	for i := 0; i < 4; i++ {
		_, err := db.Fit(ctx, a.ID, store.FitRequest{PartID: motors[i].ID, Position: fmt.Sprintf("m%d", i+1), At: t0})
		must(err)
	}
	v := "4.1.0"
	fc, err := db.CreatePart(ctx, &fleet.Part{Kind: fleet.KindFlightController, Serial: "RB-FC", SoftwareVersion: &v})
	must(err)
	_, err = db.Fit(ctx, a.ID, store.FitRequest{PartID: fc.ID, At: t0})
	must(err)
	to := "4.2.0"
	_, err = db.CreateWorkRecord(ctx, &fleet.WorkRecord{At: t0.Add(24 * time.Hour), PartID: &fc.ID, Action: "update",
		Work: "flashed", PerformedBy: "K", SoftwareTo: &to})
	must(err)
	for i := 0; i < 6; i++ {
		at := t0.Add(time.Duration(48+i*24) * time.Hour)
		sw := "4.2.0"
		_, err := db.CreateFlight(ctx, &fleet.Flight{AirframeID: a.ID, Pilot: "A. Moreau", TakeoffAt: at, LandingAt: at.Add(25 * time.Minute), Software: &sw})
		must(err)
	}
	_, err = db.CreateEvent(ctx, &fleet.Event{At: t0.Add(200 * time.Hour), Kind: "prop_strike", AirframeID: &a.ID, Detail: "tree branch"})
	must(err)
	_, err = db.CreateWorkRecord(ctx, &fleet.WorkRecord{At: t0.Add(210 * time.Hour), Action: "replace", RemovedPartID: &motors[0].ID,
		FittedPartID: &motors[4].ID, Work: "motor swapped", PerformedBy: "K",
		Discrepancies: []*fleet.Discrepancy{{Description: "m1 arm scuffed", Grounding: false}}})
	must(err)
	return a
}

func bundle(t testing.TB, db *store.DB, a *fleet.Airframe, o records.Options) []byte {
	var buf bytes.Buffer
	if err := records.Write(context.Background(), db, a.ID, o, &buf); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func readZip(t *testing.T, b []byte) map[string][]byte {
	zr, err := zip.NewReader(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][]byte{}
	for _, f := range zr.File {
		rc, err := f.Open()
		if err != nil {
			t.Fatal(err)
		}
		out[f.Name], err = io.ReadAll(rc)
		rc.Close()
		if err != nil {
			t.Fatal(err)
		}
	}
	return out
}

// The bundle holds every record with CSV copies and a manifest; verify
// passes; the same files rezipped with one byte changed fail, and so does a
// flipped byte in the zip itself.
func TestBundleVerifiesAndDetectsAChangedByte(t *testing.T) {
	t.Parallel()
	db := store.New(pgtest.NewPool(t))
	a := smallFleet(t, db)
	b := bundle(t, db, a, records.Options{})
	rep, err := records.Verify(bytes.NewReader(b), int64(len(b)))
	if err != nil || rep.Fault != "" {
		t.Fatalf("fresh bundle: %v %q", err, rep.Fault)
	}
	files := readZip(t, b)
	for _, name := range []string{"README.txt", "airframe.json", "parts.json", "flights.json", "work_records.json", "events.json",
		"discrepancies.json", "notices.json", "audit.json", "csv/parts.csv", "csv/fits.csv", "csv/flights.csv",
		"csv/work_records.csv", "csv/events.csv", "csv/discrepancies.csv", "csv/compliance.csv", "csv/audit.csv", "manifest.json"} {
		if _, ok := files[name]; !ok {
			t.Errorf("bundle lacks %s", name)
		}
	}
	if rep.Checked != len(files)-1 {
		t.Errorf("%d files checked, %d in the zip besides the manifest", rep.Checked, len(files)-1)
	}
	var flights []struct {
		ID       string  `json:"id"`
		Software *string `json:"software"`
	}
	if err := json.Unmarshal(files["flights.json"], &flights); err != nil || len(flights) != 6 {
		t.Fatalf("flights.json: %v, %d flights", err, len(flights))
	}
	var parts []struct {
		Serial   string `json:"serial"`
		Fits     []any  `json:"fits"`
		Software []any  `json:"software_history"`
	}
	if err := json.Unmarshal(files["parts.json"], &parts); err != nil || len(parts) != 6 {
		t.Fatalf("parts.json: %v, %d parts (5 motors ever fitted and the controller)", err, len(parts))
	}
	for _, p := range parts {
		if p.Serial == "RB-FC" && len(p.Software) != 2 {
			t.Errorf("controller software history %v", p.Software)
		}
	}
	rows, err := csv.NewReader(bytes.NewReader(files["csv/flights.csv"])).ReadAll()
	if err != nil || len(rows) != 7 {
		t.Fatalf("flights.csv: %v, %d rows", err, len(rows))
	}
	var audit []struct {
		Entity string `json:"entity"`
		Hash   string `json:"hash"`
	}
	if err := json.Unmarshal(files["audit.json"], &audit); err != nil {
		t.Fatal(err)
	}
	entities := map[string]int{}
	for _, r := range audit {
		entities[r.Entity]++
	}
	for _, e := range []string{"airframe", "part", "fit", "flight", "event", "work_record", "discrepancy"} {
		if entities[e] == 0 {
			t.Errorf("no audit rows for %s entities: %v", e, entities)
		}
	}
	// One byte of flights.json changed, the rest (manifest included) as is.
	var changed bytes.Buffer
	zw := zip.NewWriter(&changed)
	for name, content := range files {
		if name == "flights.json" {
			content = bytes.Replace(content, []byte("A. Moreau"), []byte("A. Moreaa"), 1)
		}
		w, _ := zw.Create(name)
		w.Write(content)
	}
	zw.Close()
	rep, err = records.Verify(bytes.NewReader(changed.Bytes()), int64(changed.Len()))
	if err != nil || !strings.Contains(rep.Fault, "flights.json has SHA-256") {
		t.Fatalf("changed byte: %v %q", err, rep.Fault)
	}
	// A byte flipped in the zip's stored data.
	for _, off := range []int{len(b) / 3, len(b) / 2, 2 * len(b) / 3} {
		bad := append([]byte(nil), b...)
		bad[off] ^= 0x01
		rep, err = records.Verify(bytes.NewReader(bad), int64(len(bad)))
		if err != nil || rep.Fault == "" {
			t.Fatalf("flipped byte at %d of %d passed verify", off, len(b))
		}
	}
	// A file dropped from the zip.
	var less bytes.Buffer
	zw = zip.NewWriter(&less)
	for name, content := range files {
		if name != "csv/events.csv" {
			w, _ := zw.Create(name)
			w.Write(content)
		}
	}
	zw.Close()
	if rep, _ = records.Verify(bytes.NewReader(less.Bytes()), int64(less.Len())); !strings.Contains(rep.Fault, "csv/events.csv is listed") {
		t.Fatalf("dropped file: %q", rep.Fault)
	}
}
