package api_test

import (
	"encoding/csv"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// Every CSV the service writes neutralises cells a spreadsheet would run as
// a formula (before the fix the manifest emitted =HYPERLINK(...) and +, -, @
// cells raw). The test finds the CSV routes in the document, so a new one
// fails here until it is covered.
func TestCSVCellsCannotBeFormulas(t *testing.T) {
	e := newEnv(t)
	a := e.quad("CSV-1")
	at := time.Now().Add(-48 * time.Hour).UTC().Truncate(time.Second)
	evil := []string{`=HYPERLINK("http://example.invalid","x")`, "+1+1", "-2+3", "@SUM(A1)", "\t=1", "\r=1"}
	for i, rot := range []fleet.Rotation{fleet.CCW, fleet.CW, fleet.CCW, fleet.CW} {
		m := e.create("/v1/parts", map[string]any{"kind": "motor", "serial": evil[i] + "-M", "part_number": evil[(i+1)%6],
			"lot": evil[(i+2)%6], "specs": map[string]any{"rotation": rot}})
		p := e.create("/v1/parts", map[string]any{"kind": "propeller", "serial": evil[i] + "-P", "lot": evil[(i+3)%6],
			"specs": map[string]any{"rotation": rot, "diameter_in": 15, "blades": 2}})
		for _, part := range []idBody{m, p} {
			if r := e.call("POST", "/v1/airframes/"+a.ID+"/fits", tech, map[string]any{"part_id": part.ID,
				"position": "m" + strconv.Itoa(i+1), "at": at}); r.Status != 201 {
				t.Fatalf("fit: %d %s", r.Status, r.Body)
			}
		}
	}
	job := e.create("/v1/jobs", map[string]any{"code": "CSV-J", "client": "=cmd|' /C calc'!A0"})
	if r := e.call("POST", "/v1/flights", tech, map[string]any{"airframe_id": a.ID, "job_id": job.ID, "pilot": evil[0],
		"takeoff_at": at.Add(time.Hour), "landing_at": at.Add(90 * time.Minute)}); r.Status != 201 {
		t.Fatalf("flight: %d %s", r.Status, r.Body)
	}
	// An airframe whose model begins like a formula, for the monthly summary.
	e.create("/v1/airframes", map[string]any{"code": "CSV-2", "layout": "quad-x", "cells_s": 6, "model": evil[1]})
	// A motor rule named like a formula puts the planted motors on the
	// planner; the board's CSV routes are read signed in.
	if r := e.call("POST", "/v1/service-rules", fleet.RoleAdmin, map[string]any{"name": "=1+1 check", "applies_to": "motor",
		"flights": 1, "action": "inspect"}); r.Status != 201 {
		t.Fatalf("rule: %d %s", r.Status, r.Body)
	}
	cookie := "rw_session=" + sessionCookie(t, e.signIn(e.tokens[fleet.RoleViewer])).Value
	board := map[string]string{"/jobs/{code}/manifest.csv": "/jobs/CSV-J/manifest.csv", "/plan.csv": "/plan.csv?days=90"}
	covered := map[string]func() string{
		"/v1/jobs/{id}/manifest": func() string { return "/v1/jobs/" + job.ID + "/manifest?format=csv" },
		"/v1/reports/monthly":    func() string { return "/v1/reports/monthly?format=csv&month=" + time.Now().UTC().Format("2006-01") },
	}
	// The monthly summary carries only airframe codes and models as text.
	minQuoted := map[string]int{"/v1/reports/monthly": 1}
	// The stored flight log is returned byte for byte as uploaded (its
	// SHA-256 identifies the upload); it is the pilot's own file, not one
	// the service writes, and it is served as an attachment.
	exempt := map[string]bool{"/v1/flights/{id}/log": true}
	for path, item := range spec.Paths.Map() {
		for _, op := range item.Operations() {
			csvOut := false
			for _, r := range op.Responses.Map() {
				if r.Value != nil && r.Value.Content.Get("text/csv") != nil {
					csvOut = true
				}
			}
			if !csvOut || exempt[path] {
				continue
			}
			var r *resp
			if u, ok := board[path]; ok {
				r = e.call("GET", u, "", nil, "Cookie", cookie)
			} else if url, ok := covered[path]; ok {
				r = e.call("GET", url(), fleet.RoleViewer, nil)
			} else {
				t.Errorf("CSV route %s is not covered by this test", path)
				continue
			}
			if r.Status != 200 {
				t.Fatalf("%s: %d %s", path, r.Status, r.Body)
			}
			rows, err := csv.NewReader(strings.NewReader(string(r.Body))).ReadAll()
			if err != nil {
				t.Fatalf("%s: %v", path, err)
			}
			quoted := 0
			for i, row := range rows {
				for j, cell := range row {
					if cell == "" || !strings.ContainsAny(cell[:1], "=+-@\t\r") {
						quoted += strings.Count(cell[:min(1, len(cell))], "'")
						continue
					}
					// A number the service formatted may be negative; nothing else may begin so.
					if _, err := strconv.ParseFloat(cell, 64); err != nil {
						t.Errorf("%s row %d column %d: %q would run as a formula", path, i+1, j+1, cell)
					}
				}
			}
			want := 10
			if n, ok := minQuoted[path]; ok {
				want = n
			}
			if quoted < want {
				t.Errorf("%s: only %d neutralised cells; the planted values did not come through", path, quoted)
			}
		}
	}
}
