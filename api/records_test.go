package api_test

import (
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// Through the API: a flight controller registered with its software, an
// update record, the history; an uploaded log whose '# software:' line
// differs from the register opens a software_mismatch event on the flight;
// a work record with a grounding discrepancy appears in the listing and in
// readiness until a later record clears it.
func TestSoftwareAndSignOffThroughTheAPI(t *testing.T) {
	e := newEnv(t)
	a, _, spec := e.simFleet()
	fc := e.create("/v1/parts", map[string]any{"kind": "flight_controller", "serial": "FC-0031", "part_number": "FC-7",
		"software_version": "4.1.0"})
	if r := e.call("POST", "/v1/airframes/"+a.ID+"/fits", tech, map[string]any{"part_id": fc.ID,
		"at": time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)}); r.Status != 201 {
		t.Fatalf("fit: %d %s", r.Status, r.Body)
	}
	// A PATCH cannot set the version; an update record does.
	etag := e.call("GET", "/v1/parts/"+fc.ID, fleet.RoleViewer, nil).Header.Get("ETag")
	if r := e.call("PATCH", "/v1/parts/"+fc.ID, tech, map[string]any{"software_version": "4.2.0"}, "If-Match", etag); r.Status != 400 {
		t.Fatalf("PATCH software_version: %d %s", r.Status, r.Body)
	}
	r := e.call("POST", "/v1/work-records", tech, map[string]any{"action": "update", "part_id": fc.ID,
		"work": "flashed per maker's release notes", "performed_by": "K. Lindqvist", "software_to": "4.2.0",
		"at": spec.Start.Add(-time.Hour)})
	if r.Status != 201 {
		t.Fatalf("update record: %d %s", r.Status, r.Body)
	}
	var hist struct {
		Items []struct {
			Version string `json:"version"`
		} `json:"items"`
	}
	e.call("GET", "/v1/parts/"+fc.ID+"/software", fleet.RoleViewer, nil).decode(t, &hist)
	if len(hist.Items) != 2 || hist.Items[0].Version != "4.2.0" || hist.Items[1].Version != "4.1.0" {
		t.Fatalf("software history %+v", hist.Items)
	}
	log, _ := genLog(t, spec)
	log = append([]byte("# software: 4.1.0\n"), log...)
	r = e.upload(map[string]any{"pilot": "I. Brandt"}, log, pilot)
	var d struct {
		ID       string  `json:"id"`
		Software *string `json:"software"`
		Events   []struct {
			Kind   string `json:"kind"`
			Detail string `json:"detail"`
		} `json:"events"`
	}
	r.decode(t, &d)
	if r.Status != 201 || d.Software == nil || *d.Software != "4.1.0" {
		t.Fatalf("upload: %d software %v", r.Status, d.Software)
	}
	var found bool
	for _, ev := range d.Events {
		found = found || (ev.Kind == "software_mismatch" && strings.Contains(ev.Detail, "FC-0031 4.2.0"))
	}
	if !found {
		t.Fatalf("no software_mismatch event naming the register's version: %+v", d.Events)
	}

	r = e.call("POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "airframe_id": a.ID,
		"work": "pre-season inspection", "performed_by": "K. Lindqvist", "approved_by": "R. Osei",
		"certificate_number": "RP-4471902", "certificate_kind": "remote pilot",
		"discrepancies": []map[string]any{{"description": "gimbal damper torn", "grounding": true}}})
	var w struct {
		Discrepancies []struct {
			ID string `json:"id"`
		} `json:"discrepancies"`
	}
	r.decode(t, &w)
	if r.Status != 201 || len(w.Discrepancies) != 1 {
		t.Fatalf("inspection with a discrepancy: %d %s", r.Status, r.Body)
	}
	var rd struct {
		Ready    bool `json:"ready"`
		Blockers []struct {
			Code string `json:"code"`
		} `json:"blockers"`
	}
	e.call("GET", "/v1/airframes/"+a.ID+"/readiness", fleet.RoleViewer, nil).decode(t, &rd)
	if rd.Ready || len(rd.Blockers) == 0 || rd.Blockers[0].Code != "grounding_discrepancy" {
		t.Fatalf("readiness with a grounding discrepancy: %+v", rd)
	}
	var list struct {
		Items []any `json:"items"`
	}
	e.call("GET", "/v1/discrepancies?open=true&airframe_id="+a.ID, fleet.RoleViewer, nil).decode(t, &list)
	if len(list.Items) != 1 {
		t.Fatalf("open discrepancies listed: %d", len(list.Items))
	}
	if r := e.call("POST", "/v1/work-records", tech, map[string]any{"action": "repair", "airframe_id": a.ID,
		"work": "damper replaced", "performed_by": "K. Lindqvist", "approved_by": "R. Osei",
		"certificate_number": "RP-4471902", "certificate_kind": "remote pilot",
		"return_to_service": "airworthy", "clears": []string{w.Discrepancies[0].ID}}); r.Status != 201 {
		t.Fatalf("clearing record: %d %s", r.Status, r.Body)
	}
	e.call("GET", "/v1/discrepancies?open=true&airframe_id="+a.ID, fleet.RoleViewer, nil).decode(t, &list)
	if len(list.Items) != 0 {
		t.Fatalf("open after clearing: %d", len(list.Items))
	}
}
