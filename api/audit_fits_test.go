package api_test

import (
	"encoding/json"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

type auditRow struct {
	RequestID       string          `json:"request_id"`
	ClientRequestID *string         `json:"client_request_id"`
	Route           string          `json:"route"`
	Entity          string          `json:"entity"`
	EntityID        string          `json:"entity_id"`
	Before          json.RawMessage `json:"before"`
	After           json.RawMessage `json:"after"`
}

func (e *env) auditOf(entity string) []auditRow {
	e.t.Helper()
	var l struct {
		Items []auditRow `json:"items"`
	}
	r := e.call("GET", "/v1/audit?limit=500&entity="+entity, admin, nil)
	if r.Status != 200 {
		e.t.Fatalf("audit: %d %s", r.Status, r.Body)
	}
	r.decode(e.t, &l)
	return l.Items
}

func isNull(raw json.RawMessage) bool { return len(raw) == 0 || string(raw) == "null" }

// closedFits counts the audit rows of a route that end an open fit.
func closedFits(t *testing.T, rows []auditRow, route string) map[string]bool {
	t.Helper()
	out := map[string]bool{}
	for _, r := range rows {
		if r.Route != route || isNull(r.Before) {
			continue
		}
		var b, a fleet.Fit
		if err := json.Unmarshal(r.Before, &b); err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(r.After, &a); err != nil {
			t.Fatal(err)
		}
		if b.RemovedAt == nil && a.RemovedAt != nil && a.RemovalReason != nil {
			out[a.PartID] = true
		}
	}
	return out
}

// Retiring an airframe and the replace and retire work records end fits:
// each ended fit (and each fit made) has its audit row, and so does the
// part whose status changes (before the fix they had none).
func TestFitsClosedByRetireAndWorkRecordsAreAudited(t *testing.T) {
	e := newEnv(t)
	at := time.Now().Add(-48 * time.Hour).UTC().Truncate(time.Second)
	a := e.quad("FA-01")
	motors, props := e.fitQuad(a, "FA", "", at)

	// A replace work record: the old motor's fit ends, the new one's starts.
	spare := e.motor("FA-MS", fleet.CCW, "")
	r := e.call("POST", "/v1/work-records", tech, map[string]any{"action": "replace", "work": "motor swap",
		"performed_by": "tech one", "removed_part_id": motors[0].ID, "fitted_part_id": spare.ID})
	if r.Status != 201 {
		t.Fatalf("replace: %d %s", r.Status, r.Body)
	}
	fits := e.auditOf("fit")
	if got := closedFits(t, fits, "/v1/work-records"); len(got) != 1 || !got[motors[0].ID] {
		t.Fatalf("replace: audit rows ending fits %v, want the removed motor's", got)
	}
	made := 0
	for _, f := range fits {
		if f.Route == "/v1/work-records" && isNull(f.Before) {
			made++
		}
	}
	if made != 1 {
		t.Fatalf("replace: %d audit rows for the new fit, want 1", made)
	}

	// A retire work record on a fitted propeller.
	r = e.call("POST", "/v1/work-records", tech, map[string]any{"action": "retire", "work": "chipped blade",
		"performed_by": "tech one", "part_id": props[1].ID})
	if r.Status != 201 {
		t.Fatalf("retire part: %d %s", r.Status, r.Body)
	}
	if got := closedFits(t, e.auditOf("fit"), "/v1/work-records"); len(got) != 2 || !got[props[1].ID] {
		t.Fatalf("retire: audit rows ending fits %v, want the propeller's too", got)
	}

	// Retiring the airframe ends the six fits still open.
	cur := e.call("GET", "/v1/airframes/"+a.ID, fleet.RoleViewer, nil)
	r = e.call("DELETE", "/v1/airframes/"+a.ID, admin, nil, "If-Match", cur.Header.Get("ETag"))
	if r.Status != 200 {
		t.Fatalf("retire airframe: %d %s", r.Status, r.Body)
	}
	got := closedFits(t, e.auditOf("fit"), "/v1/airframes/:id")
	want := []idBody{spare, motors[1], motors[2], motors[3], props[0], props[2], props[3]}
	if len(got) != len(want) {
		t.Fatalf("airframe retired: %d audit rows ending fits, want %d", len(got), len(want))
	}
	for _, p := range want {
		if !got[p.ID] {
			t.Errorf("no audit row ends the fit of part %s", p.ID)
		}
	}
	// The parts went back to stock, and the part log says so.
	stock := 0
	for _, row := range e.auditOf("part") {
		var b, a fleet.Part
		if row.Route != "/v1/airframes/:id" || json.Unmarshal(row.Before, &b) != nil || json.Unmarshal(row.After, &a) != nil {
			continue
		}
		if b.Status == fleet.PartFitted && a.Status == fleet.PartStock {
			stock++
		}
	}
	if stock != len(want) {
		t.Fatalf("%d part audit rows fitted -> stock, want %d", stock, len(want))
	}
}

// The audit log's request_id is always ours (the X-Request-ID we answer
// with); a client's X-Request-ID is kept beside it (before the fix it
// replaced ours). A client id that is not clean text is refused.
func TestRequestIDOursClientsKeptApart(t *testing.T) {
	e := newEnv(t)
	r := e.call("POST", "/v1/jobs", tech, map[string]any{"code": "RQ-1", "client": "c"}, "X-Request-ID", "client-chosen-1")
	if r.Status != 201 {
		t.Fatalf("create: %d %s", r.Status, r.Body)
	}
	ours := r.Header.Get("X-Request-ID")
	if ours == "" || ours == "client-chosen-1" {
		t.Fatalf("X-Request-ID answered %q, want our own id", ours)
	}
	rows := e.auditOf("job")
	last := rows[len(rows)-1]
	if last.RequestID != ours || last.ClientRequestID == nil || *last.ClientRequestID != "client-chosen-1" {
		t.Fatalf("audit request_id %q client %v, want %q and client-chosen-1", last.RequestID, last.ClientRequestID, ours)
	}
	r = e.call("POST", "/v1/jobs", tech, map[string]any{"code": "RQ-2", "client": "c"})
	rows = e.auditOf("job")
	if last := rows[len(rows)-1]; last.ClientRequestID != nil || last.RequestID != r.Header.Get("X-Request-ID") {
		t.Fatalf("without a client id: %+v", last)
	}
	r = e.call("POST", "/v1/jobs", tech, map[string]any{"code": "RQ-3", "client": "c"}, "X-Request-ID", "a\x01b")
	if p := r.problem(t); r.Status != 400 || p.Field != "X-Request-ID" {
		t.Fatalf("control character in X-Request-ID: %d %q", r.Status, p.Field)
	}
	// The chain still verifies with the new column.
	res, err := e.db.VerifyAudit(t.Context(), store.VerifyOptions{})
	if err != nil || res.Fault != nil {
		t.Fatalf("audit verify: %v %+v", err, res)
	}
}
