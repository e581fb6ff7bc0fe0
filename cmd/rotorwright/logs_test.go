package main

import (
	"bytes"
	"context"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// import: new logs are imported, a copy is already present, a bad file is
// refused with its line and column; reanalyze recomputes stored figures.
func TestImportAndReanalyze(t *testing.T) {
	t.Parallel()
	url, db := testStore(t)
	ctx := context.Background()
	dim := 254.0
	empty := 1000.0
	if _, err := db.CreateAirframe(ctx, &fleet.Airframe{Code: "SIM-01", Layout: "quad-x", CellsS: 4, PacksPerFlight: 1,
		RotorDiameterMM: &dim, EmptyMassG: &empty}); err != nil {
		t.Fatal(err)
	}
	if _, err := db.CreatePart(ctx, &fleet.Part{Kind: fleet.KindPack, Serial: "SIM-P1",
		Specs: []byte(`{"chemistry":"lipo","cells_s":4,"cells_p":1,"rated_mah":8000}`)}); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	start := time.Now().Add(-10 * time.Hour).UTC().Truncate(time.Second)
	var first []byte
	for i := 0; i < 2; i++ {
		spec := sim.DefaultSpec(uint64(100 + i))
		spec.Start, spec.DurationS = start.Add(time.Duration(i)*time.Hour), 120
		var buf bytes.Buffer
		if _, err := sim.Generate(spec, &buf); err != nil {
			t.Fatal(err)
		}
		if i == 0 {
			first = buf.Bytes()
		}
		os.WriteFile(filepath.Join(dir, "flight-"+string(rune('a'+i))+".csv"), buf.Bytes(), 0o644)
	}
	os.WriteFile(filepath.Join(dir, "flight-c-copy.csv"), first, 0o644)
	os.WriteFile(filepath.Join(dir, "flight-d-bad.csv"), []byte("t_s,pack_v,pack_a\n0,16.8,0.5\n0.5,16.7,x\n"), 0o644)

	// The airframe has no motors or propellers on record: the logs are
	// imported all the same (the old code refused every one as not ready),
	// their verdicts warn of the gap; only the bad file is refused.
	// Flags after the folder here, before it the second time: both orders
	// are one command line.
	out, errOut, code := runCLI(t, "import", dir, "--airframe", "SIM-01", "--database-url", url)
	if code != exitFailure || !strings.Contains(errOut, "1 of 4 logs refused") {
		t.Fatalf("import: exit %d, stderr %q, want 1 of 4 refused\n%s", code, errOut, out)
	}
	if !strings.Contains(out, "2 imported (0 flown not ready), 1 already present, 1 refused") ||
		!strings.Contains(out, "flight-d-bad.csv: line 3, column pack_a") {
		t.Fatalf("summary:\n%s", out)
	}
	var warned int
	if err := db.Pool().QueryRow(ctx, `SELECT count(*) FROM flights
		WHERE readiness_at_takeoff->'warnings' @> '[{"code": "no_fitted_motors"}]'`).Scan(&warned); err != nil || warned != 2 {
		t.Fatalf("%d flights warn of no fitted motors, want 2 (%v)", warned, err)
	}
	out, errOut, code = runCLI(t, "import", "--airframe", "SIM-01", "--override", "bench logs from the test rig",
		"--database-url", url, dir)
	if code != exitFailure || !strings.Contains(out, "0 imported (0 flown not ready), 3 already present, 1 refused") {
		t.Fatalf("second import: exit %d\n%s\n%s", code, out, errOut)
	}

	// Spoil a stored figure, then reanalyze puts back what the log says.
	var id string
	var want float64
	if err := db.Pool().QueryRow(ctx, `SELECT flight_id, charge_mah FROM flight_metrics ORDER BY flight_id LIMIT 1`).Scan(&id, &want); err != nil {
		t.Fatal(err)
	}
	if _, err := db.Pool().Exec(ctx, `UPDATE flight_metrics SET charge_mah = 1, metrics = '{}' WHERE flight_id = $1`, id); err != nil {
		t.Fatal(err)
	}
	out, errOut, code = runCLI(t, "reanalyze", "--database-url", url)
	if code != 0 || !strings.Contains(out, "reanalysed 2 stored logs") {
		t.Fatalf("reanalyze: exit %d\n%s\n%s", code, out, errOut)
	}
	var got float64
	if err := db.Pool().QueryRow(ctx, `SELECT charge_mah FROM flight_metrics WHERE flight_id = $1`, id).Scan(&got); err != nil {
		t.Fatal(err)
	}
	if math.Abs(got-want) > 1e-9 {
		t.Fatalf("after reanalyze charge %v, want %v", got, want)
	}

	// A log analysed by an older model (as after an upgrade): --stale
	// reanalyses it alone, to the current version and definitions (the
	// airborne mean power and the whole-log mean beside it).
	if _, err := db.Pool().Exec(ctx, `UPDATE flight_logs SET analysis_version = 1 WHERE flight_id = $1`, id); err != nil {
		t.Fatal(err)
	}
	if _, err := db.Pool().Exec(ctx, `UPDATE flight_metrics SET metrics = '{}' WHERE flight_id = $1`, id); err != nil {
		t.Fatal(err)
	}
	if n, err := db.StaleLogs(ctx, ingest.AnalysisVersion); err != nil || n != 1 {
		t.Fatalf("stale logs %d, %v", n, err)
	}
	out, errOut, code = runCLI(t, "reanalyze", "--stale", "--database-url", url)
	if code != 0 || !strings.Contains(out, "reanalysed 1 stored logs") {
		t.Fatalf("reanalyze --stale: exit %d\n%s\n%s", code, out, errOut)
	}
	var version int
	var source string
	if err := db.Pool().QueryRow(ctx, `SELECT l.analysis_version, m.metrics->>'mean_power_source' FROM flight_logs l
		JOIN flight_metrics m USING (flight_id) WHERE flight_id = $1`, id).Scan(&version, &source); err != nil {
		t.Fatal(err)
	}
	if version != ingest.AnalysisVersion || source != "airborne" {
		t.Fatalf("after reanalyze --stale: version %d, mean power source %q", version, source)
	}
}
