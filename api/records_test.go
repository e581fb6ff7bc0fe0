package api_test

import (
	"bytes"
	"encoding/csv"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/records"
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
	r = e.upload(map[string]any{"pilot": "I. Brandt"}, log, tech)
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

// Notices through the API: a technician records one, the compliance list
// shows the subject open, a not-applicable decision and a withdrawal; the
// due list carries an open notice with its notice id.
func TestNoticesThroughTheAPI(t *testing.T) {
	e := newEnv(t)
	a := e.quad("NT-1")
	e.fitQuad(a, "NT", "", time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC))
	r := e.call("POST", "/v1/notices", tech, map[string]any{"reference": "SB-26-020", "title": "arm clamp torque",
		"issued_on": "2026-01-05", "category": "mandatory", "required_work": "re-torque the arm clamps to 2.5 N m",
		"applicability": map[string]any{"airframe_models": []string{"Surveyor 4"}},
		"window":        map[string]any{"days": 30, "from": "issue"}})
	var n struct {
		ID string `json:"id"`
	}
	r.decode(t, &n)
	if r.Status != 201 {
		t.Fatalf("create notice: %d %s", r.Status, r.Body)
	}
	if r := e.call("POST", "/v1/notices", fleet.RolePilot, map[string]any{}); r.Status != 403 {
		t.Fatalf("pilot creating a notice: %d", r.Status)
	}
	var cs struct {
		Items []struct {
			Subject   string  `json:"subject"`
			Status    string  `json:"status"`
			DueStatus *string `json:"due_status"`
		} `json:"items"`
	}
	e.call("GET", "/v1/notices/"+n.ID+"/compliance", fleet.RoleViewer, nil).decode(t, &cs)
	if len(cs.Items) != 1 || cs.Items[0].Subject != "NT-1" || cs.Items[0].Status != "open" || *cs.Items[0].DueStatus != "overdue" {
		t.Fatalf("compliance %+v", cs.Items)
	}
	var due struct {
		Items []struct {
			NoticeID *string `json:"notice_id"`
			Action   string  `json:"action"`
		} `json:"items"`
	}
	e.call("GET", "/v1/due?airframe="+a.ID, fleet.RoleViewer, nil).decode(t, &due)
	found := false
	for _, it := range due.Items {
		found = found || (it.NoticeID != nil && *it.NoticeID == n.ID && it.Action == "comply")
	}
	if !found {
		t.Fatalf("the due list lacks the notice: %+v", due.Items)
	}
	if r := e.call("POST", "/v1/notices/"+n.ID+"/decisions", tech, map[string]any{"subject_kind": "airframe",
		"subject_id": a.ID, "reason": "clamps of the revised type, not affected"}); r.Status != 201 {
		t.Fatalf("decision: %d %s", r.Status, r.Body)
	}
	e.call("GET", "/v1/notices/"+n.ID+"/compliance?at="+time.Now().Add(time.Minute).UTC().Format(time.RFC3339), fleet.RoleViewer, nil).decode(t, &cs)
	if len(cs.Items) != 1 || cs.Items[0].Status != "not_applicable" {
		t.Fatalf("after the decision: %+v", cs.Items)
	}
	if r := e.call("DELETE", "/v1/notices/"+n.ID+"/decisions/"+a.ID, admin, nil); r.Status != 204 {
		t.Fatalf("withdraw decision: %d %s", r.Status, r.Body)
	}
	etag := e.call("GET", "/v1/notices/"+n.ID, fleet.RoleViewer, nil).Header.Get("ETag")
	if r := e.call("DELETE", "/v1/notices/"+n.ID, tech, nil, "If-Match", etag); r.Status != 403 {
		t.Fatalf("technician withdrawing: %d", r.Status)
	}
	if r := e.call("DELETE", "/v1/notices/"+n.ID, admin, nil, "If-Match", etag); r.Status != 204 {
		t.Fatalf("withdraw: %d %s", r.Status, r.Body)
	}
	e.call("GET", "/v1/notices/"+n.ID+"/compliance", fleet.RoleViewer, nil).decode(t, &cs)
	if len(cs.Items) != 0 {
		t.Fatalf("a withdrawn notice still applies: %+v", cs.Items)
	}
}

// The records bundle through the router: a technician gets a zip that
// verifies (with the raw logs when asked); a viewer gets 403.
func TestRecordsBundleThroughTheAPI(t *testing.T) {
	e := newEnv(t)
	a, _, spec := e.simFleet()
	log, _ := genLog(t, spec)
	if r := e.upload(map[string]any{"pilot": "I. Brandt"}, log, tech); r.Status != 201 {
		t.Fatalf("upload: %d %s", r.Status, r.Body)
	}
	r := e.call("GET", "/v1/airframes/"+a.ID+"/records?logs=true", tech, nil)
	if r.Status != 200 || r.Header.Get("Content-Type") != "application/zip" ||
		!strings.Contains(r.Header.Get("Content-Disposition"), "-records-") {
		t.Fatalf("bundle: %d %v", r.Status, r.Header)
	}
	rep, err := records.Verify(bytes.NewReader(r.Body), int64(len(r.Body)))
	if err != nil || rep.Fault != "" {
		t.Fatalf("verify: %v %q", err, rep.Fault)
	}
	logs := 0
	for _, f := range rep.Manifest.Files {
		if strings.HasPrefix(f.Name, "logs/") {
			logs++
		}
	}
	if logs != 1 {
		t.Fatalf("%d raw logs in the bundle, want 1", logs)
	}
	if r := e.call("GET", "/v1/airframes/"+a.ID+"/records", fleet.RoleViewer, nil); r.Status != 403 {
		t.Fatalf("viewer: %d", r.Status)
	}
	if r := e.call("GET", "/v1/airframes/"+someID+"/records", tech, nil); r.Status != 404 {
		t.Fatalf("unknown airframe: %d", r.Status)
	}
}

// The monthly summary counts one month's flights, hours, flights flown not
// ready, work by action, events by kind and discrepancies per airframe, and
// nothing from the month before; the CSV has a row per airframe and a total.
func TestMonthlyReport(t *testing.T) {
	e := newEnv(t)
	now := time.Now().UTC()
	month := time.Date(now.Year(), now.Month(), 1, 0, 0, 0, 0, time.UTC).AddDate(0, -1, 0)
	a := e.quad("MR-1")
	e.fitQuad(a, "MR", "", month.AddDate(0, -2, 0))
	flight := func(at time.Time, minutes int, override string) {
		t.Helper()
		body := map[string]any{"airframe_id": a.ID, "pilot": "B. Okafor", "takeoff_at": at,
			"landing_at": at.Add(time.Duration(minutes) * time.Minute)}
		if override != "" {
			body["override_reason"] = override
		}
		if r := e.call("POST", "/v1/flights", tech, body); r.Status != 201 {
			t.Fatalf("flight: %d %s", r.Status, r.Body)
		}
	}
	flight(month.AddDate(0, 0, -3), 30, "") // the month before
	flight(month.AddDate(0, 0, 2), 30, "")  // in the month
	flight(month.AddDate(0, 0, 3), 45, "")  // in the month
	if r := e.call("POST", "/v1/events", pilot, map[string]any{"kind": "hard_landing", "airframe_id": a.ID,
		"at": month.AddDate(0, 0, 3).Add(45 * time.Minute), "detail": "gusty"}); r.Status != 201 {
		t.Fatalf("event: %d %s", r.Status, r.Body)
	}
	flight(month.AddDate(0, 0, 4), 15, "ferry to the workshop") // flown not ready (the hard landing is open)
	if r := e.call("POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "airframe_id": a.ID,
		"at": month.AddDate(0, 0, 5), "work": "post hard-landing inspection", "performed_by": "K. Lindqvist",
		"discrepancies": []map[string]any{{"description": "landing gear leg bent", "grounding": true}}}); r.Status != 201 {
		t.Fatalf("work: %d %s", r.Status, r.Body)
	}
	var rep struct {
		Month     string `json:"month"`
		Airframes []struct {
			Airframe           string         `json:"airframe"`
			Flights            int            `json:"flights"`
			FlightHours        float64        `json:"flight_hours"`
			FlownNotReady      int            `json:"flown_not_ready"`
			Maintenance        map[string]int `json:"maintenance"`
			EventsByKind       map[string]int `json:"events_by_kind"`
			DiscrepanciesFound int            `json:"discrepancies_found"`
		} `json:"airframes"`
		Total struct {
			Flights int `json:"flights"`
		} `json:"total"`
	}
	m := month.Format("2006-01")
	e.call("GET", "/v1/reports/monthly?month="+m, fleet.RoleViewer, nil).decode(t, &rep)
	if rep.Month != m || len(rep.Airframes) != 1 {
		t.Fatalf("report %+v", rep)
	}
	l := rep.Airframes[0]
	if l.Flights != 3 || l.FlightHours != 1.5 || l.FlownNotReady != 1 || l.Maintenance["inspect"] != 1 ||
		l.EventsByKind["hard_landing"] != 1 || l.DiscrepanciesFound != 1 || rep.Total.Flights != 3 {
		t.Fatalf("line %+v total %+v", l, rep.Total)
	}
	r := e.call("GET", "/v1/reports/monthly?month="+m+"&format=csv", fleet.RoleViewer, nil)
	rows, err := csv.NewReader(bytes.NewReader(r.Body)).ReadAll()
	if err != nil || len(rows) != 3 || rows[1][1] != "MR-1" || rows[2][1] != "all airframes" || rows[1][3] != "3" {
		t.Fatalf("csv %v %v", err, rows)
	}
	if r := e.call("GET", "/v1/reports/monthly?month=2026-13", fleet.RoleViewer, nil); r.Status != 400 || r.problem(t).Field != "month" {
		t.Fatalf("bad month: %d", r.Status)
	}
}

// A records bundle holds a database connection while it streams, so only
// so many are written at once: with every slot taken, as by bundles being
// read, the next is told to come back (503 with Retry-After) rather than
// waiting for a connection the rest of the API needs; once they are free it
// is written, and a bundle written gives its slot back.
func TestRecordsBundlesAtOnceAreCapped(t *testing.T) {
	e := newEnv(t)
	a, _, _ := e.simFleet()
	release := api.HoldExports(e.srv)
	r := e.call("GET", "/v1/airframes/"+a.ID+"/records", tech, nil)
	if r.Status != 503 || r.Header.Get("Retry-After") == "" {
		t.Fatalf("with every bundle slot taken: %d (Retry-After %q) %s", r.Status, r.Header.Get("Retry-After"), r.Body)
	}
	if r := e.call("GET", "/v1/airframes/"+a.ID+"/fitment", tech, nil); r.Status != 200 {
		t.Fatalf("the rest of the API beside them: %d", r.Status)
	}
	release()
	for i := range 3 {
		if r := e.call("GET", "/v1/airframes/"+a.ID+"/records", tech, nil); r.Status != 200 {
			t.Fatalf("bundle %d with the slots free: %d %s", i, r.Status, r.Body)
		}
	}
}
