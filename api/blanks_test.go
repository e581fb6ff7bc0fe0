package api_test

import (
	"bytes"
	"context"
	"maps"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// blankLog blanks cells of a native simulator log as real exports leave
// them: lat/lon before a GPS fix (the first 30 s), every other row of the
// cell columns, every 20th rpm_m3 frame; it returns the counts per column.
func blankLog(t *testing.T, log []byte) ([]byte, map[string]int) {
	t.Helper()
	lines := strings.Split(string(log), "\n")
	var header []string
	counts := map[string]int{}
	row := 0
	for i, line := range lines {
		if line == "" || line[0] == '#' {
			continue
		}
		fs := strings.Split(line, ",")
		if header == nil {
			header = fs
			continue
		}
		for k, c := range header {
			blank := false
			switch {
			case c == "lat" || c == "lon":
				ts, err := strconv.ParseFloat(fs[0], 64)
				if err != nil {
					t.Fatal(err)
				}
				blank = ts < 30
			case strings.HasPrefix(c, "cell_"):
				blank = row%2 == 1
			case c == "rpm_m3":
				blank = row%20 == 7
			}
			if blank {
				fs[k] = ""
				counts[c]++
			}
		}
		lines[i] = strings.Join(fs, ",")
		row++
	}
	return []byte(strings.Join(lines, "\n")), counts
}

type blankDetail struct {
	ID  string `json:"id"`
	Log struct {
		Samples    int            `json:"samples"`
		BlankCells map[string]int `json:"blank_cells"`
	} `json:"log"`
	Metrics struct {
		DistanceM *float64 `json:"distance_m"`
		Warnings  []any    `json:"warnings"`
	} `json:"metrics"`
}

// A log whose optional cells are blank in places is recorded (such a log
// was refused before), and the response and the stored flight count the
// blanks per column in log.blank_cells, valid against the document; the
// same through a column map, counted by the service's column names. A
// blank in pack_a is still refused, naming line and column, with nothing
// written.
func TestUploadWithBlankCells(t *testing.T) {
	e := newEnv(t)
	a, pk, spec := e.simFleet()
	log, _ := genLog(t, spec)
	holed, want := blankLog(t, log)
	if want["lat"] == 0 || want["cell_1_v"] == 0 || want["rpm_m3"] == 0 {
		t.Fatalf("set-up: blanked %v", want)
	}
	flight := map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "packs": []string{pk.ID},
		"site_elevation_m": spec.SiteElevationM}

	// pack_a is required: one blank refuses the log, nothing written.
	lines := strings.Split(string(holed), "\n")
	fs := strings.Split(lines[100], ",")
	fs[2] = ""
	lines[100] = strings.Join(fs, ",")
	r := e.upload(flight, []byte(strings.Join(lines, "\n")), pilot)
	if p := r.problem(t); r.Status != 422 || p.Line != 101 || p.Column != "pack_a" {
		t.Fatalf("blank pack_a: %d %+v", r.Status, p)
	}
	var n int
	if err := e.db.Pool().QueryRow(context.Background(), `SELECT count(*) FROM flights`).Scan(&n); err != nil || n != 0 {
		t.Fatalf("%d flights after a refusal (%v)", n, err)
	}

	r = e.upload(flight, holed, pilot)
	if r.Status != 201 {
		t.Fatalf("upload with blank cells: %d %s", r.Status, r.Body)
	}
	var d blankDetail
	r.decode(t, &d)
	if !maps.Equal(d.Log.BlankCells, want) || d.Metrics.DistanceM == nil || len(d.Metrics.Warnings) != 0 {
		t.Fatalf("response: blank_cells %v (want %v), distance %v, warnings %v", d.Log.BlankCells, want, d.Metrics.DistanceM, d.Metrics.Warnings)
	}
	var g blankDetail
	e.call("GET", "/v1/flights/"+d.ID, fleet.RoleViewer, nil).decode(t, &g)
	if !maps.Equal(g.Log.BlankCells, want) {
		t.Fatalf("stored blank_cells %v, want %v", g.Log.BlankCells, want)
	}

	// The next flight, in a foreign layout, through its map.
	spec.Start = spec.Start.Add(time.Hour)
	log2, _ := genLog(t, spec)
	holed2, want2 := blankLog(t, log2)
	lay := sim.LogLayouts()[0]
	m := e.createMap(lay.Map)
	var foreign bytes.Buffer
	if err := lay.Rewrite(holed2, &foreign); err != nil {
		t.Fatal(err)
	}
	r = e.uploadWith(flight, foreign.Bytes(), logPart{mapRef: m.Name})
	if r.Status != 201 {
		t.Fatalf("mapped upload with blank cells: %d %s", r.Status, r.Body)
	}
	var d2 blankDetail
	r.decode(t, &d2)
	if !maps.Equal(d2.Log.BlankCells, want2) {
		t.Fatalf("mapped blank_cells %v, want %v", d2.Log.BlankCells, want2)
	}

	// A flight without a blank cell has an empty object.
	spec.Start = spec.Start.Add(time.Hour)
	log3, _ := genLog(t, spec)
	r = e.upload(flight, log3, pilot)
	var d3 blankDetail
	r.decode(t, &d3)
	if r.Status != 201 || d3.Log.BlankCells == nil || len(d3.Log.BlankCells) != 0 {
		t.Fatalf("complete log: %d blank_cells %v", r.Status, d3.Log.BlankCells)
	}
}
