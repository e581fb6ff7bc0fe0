package main

import (
	"bytes"
	"compress/gzip"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// column-map check says which map a file is read through, how its columns
// map, its first rows and any refusal; import --column-map reads a folder of
// foreign logs (plain and .csv.gz) through a map.
func TestColumnMapCheckAndImport(t *testing.T) {
	t.Parallel()
	url, db := testStore(t)
	ctx := context.Background()
	layouts := sim.LogLayouts()
	var maps []*fleet.ColumnMap
	for _, l := range layouts {
		var m fleet.ColumnMap
		if err := json.Unmarshal(l.Map, &m); err != nil {
			t.Fatal(err)
		}
		out, err := db.CreateColumnMap(ctx, &m)
		if err != nil {
			t.Fatal(err)
		}
		maps = append(maps, out)
	}
	dir := t.TempDir()
	spec := sim.DefaultSpec(31)
	spec.Start, spec.DurationS = time.Now().Add(-10*time.Hour).UTC().Truncate(time.Second), 120
	var native bytes.Buffer
	if _, err := sim.Generate(spec, &native); err != nil {
		t.Fatal(err)
	}
	files := map[string][]byte{"native.csv": native.Bytes()}
	for _, l := range layouts {
		var b bytes.Buffer
		if err := l.Rewrite(native.Bytes(), &b); err != nil {
			t.Fatal(err)
		}
		files[l.Name+".csv"] = b.Bytes()
	}
	for name, b := range files {
		os.WriteFile(filepath.Join(dir, name), b, 0o644)
	}

	out, errOut, code := runCLI(t, "column-map", "check", filepath.Join(dir, "utc-text.csv"), "--database-url", url)
	for _, want := range []string{`detected: the header holds every detect name of "sim-utc-text" (utc, amps_out)`,
		`layout: column map "sim-utc-text" version 1`, "pack_a <- amps_out (negated)", "temp_c <- oat_F (x 0.5555555555555556, + -17.77777777777778)",
		"not in the header, so absent: cell10 (cell_10_v),", "start: " + spec.Start.Format(time.RFC3339), "accepted: ", "first 5 rows as the service reads them:", "t_s  pack_v  pack_a"} {
		if code != 0 || !strings.Contains(out, want) {
			t.Fatalf("check: exit %d, want %q in\n%s%s", code, want, out, errOut)
		}
	}
	out, _, code = runCLI(t, "column-map", "check", filepath.Join(dir, "native.csv"), "--rows", "0", "--database-url", url)
	if code != 0 || !strings.Contains(out, "layout: native") || strings.Contains(out, "first") {
		t.Fatalf("check native: exit %d\n%s", code, out)
	}

	// Blank optional cells are counted and printed blank.
	out, _, code = runCLI(t, "column-map", "check", "../../testdata/logs/blank_cells.csv", "--rows", "2", "--database-url", url)
	if code != 0 || !strings.Contains(out, "blank cells (no reading): baro_pa 2; cell_1_v 10; cell_2_v 10; cell_3_v 10; lat 6; lon 6; rpm_m2 1\n") ||
		strings.Contains(out, "NaN") {
		t.Fatalf("check of a log with blank cells: exit %d\n%s", code, out)
	}

	// A refusal names line and source column; a draft map from a file is
	// checked as creation would check it.
	lines := strings.Split(string(files["epoch-us.csv"]), "\n")
	f := strings.Split(lines[811], ",")
	f[2] = `"1,2"`
	lines[811] = strings.Join(f, ",")
	bad := filepath.Join(dir, "bad.csv.gz")
	var gz bytes.Buffer
	zw := gzip.NewWriter(&gz)
	zw.Write([]byte(strings.Join(lines, "\n")))
	zw.Close()
	os.WriteFile(bad, gz.Bytes(), 0o644)
	out, _, code = runCLI(t, "column-map", "check", bad, "--column-map", "sim-epoch-us", "--database-url", url)
	if code != exitFailure || !strings.Contains(out, `refused: line 812, column ibus_cA (maps to pack_a): value "1,2" is not a number`) {
		t.Fatalf("check of a bad file: exit %d\n%s", code, out)
	}
	draft := filepath.Join(t.TempDir(), "draft.json")
	var dm map[string]any
	json.Unmarshal(layouts[1].Map, &dm)
	dm["name"] = "draft"
	b, _ := json.Marshal(dm)
	os.WriteFile(draft, b, 0o644)
	out, _, code = runCLI(t, "column-map", "check", filepath.Join(dir, "elapsed-ms.csv"), "--map-file", draft, "--database-url", url)
	if code != 0 || !strings.Contains(out, `layout: column map "draft"`) || !strings.Contains(out, "ignored columns: remark") ||
		!strings.Contains(out, `creating "draft" would be refused`) {
		t.Fatalf("check with a draft map: exit %d\n%s", code, out)
	}
	delete(dm["columns"].(map[string]any), "pack_v")
	b, _ = json.Marshal(dm)
	os.WriteFile(draft, b, 0o644)
	_, errOut, code = runCLI(t, "column-map", "check", filepath.Join(dir, "elapsed-ms.csv"), "--map-file", draft, "--database-url", url)
	if code != exitFailure || !strings.Contains(errOut, "columns.pack_v: required column pack_v is missing") {
		t.Fatalf("check with a bad draft map: exit %d\n%s", code, errOut)
	}

	// import --column-map: the epoch layout, plain and gzip-compressed in
	// the same folder (the same log twice: one flight).
	if _, err := db.CreateAirframe(ctx, &fleet.Airframe{Code: "SIM-01", Layout: "quad-x", CellsS: 4, PacksPerFlight: 1}); err != nil {
		t.Fatal(err)
	}
	imp := t.TempDir()
	os.WriteFile(filepath.Join(imp, "a.csv"), files["epoch-us.csv"], 0o644)
	gz.Reset()
	zw = gzip.NewWriter(&gz)
	zw.Write(files["epoch-us.csv"])
	zw.Close()
	os.WriteFile(filepath.Join(imp, "b.csv.gz"), gz.Bytes(), 0o644)
	out, errOut, code = runCLI(t, "import", imp, "--airframe", "SIM-01", "--column-map", "sim-epoch-us",
		"--override", "bench logs", "--database-url", url)
	if code != 0 || !strings.Contains(out, "1 imported (0 flown not ready), 1 already present, 0 refused") {
		t.Fatalf("import --column-map: exit %d\n%s\n%s", code, out, errOut)
	}
	var mapID string
	var mapVersion int
	if err := db.Pool().QueryRow(ctx, `SELECT column_map_id, column_map_version FROM flight_logs`).Scan(&mapID, &mapVersion); err != nil {
		t.Fatal(err)
	}
	if mapID != maps[0].ID || mapVersion != 1 {
		t.Fatalf("stored map %s v%d, want %s v1", mapID, mapVersion, maps[0].ID)
	}
	_, errOut, code = runCLI(t, "import", imp, "--airframe", "SIM-01", "--column-map", "nope", "--database-url", url)
	if code != exitFailure || !strings.Contains(errOut, "column map nope") {
		t.Fatalf("import with an unknown map: exit %d\n%s", code, errOut)
	}
}
