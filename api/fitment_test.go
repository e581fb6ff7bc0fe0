package api_test

import (
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"net/http/httptest"
	"net/url"
	"reflect"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// The fitment the database writes as JSON (passed through by the handler)
// says what the store's decoded Fitment says, on airframes bare, full, with
// a part removed, asked now and at moments before, between and after, with
// times that have fractional seconds and text that JSON escapes.
func TestFitmentPassThroughMatchesDecoded(t *testing.T) {
	e := newEnv(t)
	bare, full := e.quad("PT-01"), e.quad("PT-02")
	t0 := time.Now().Add(-72 * time.Hour).UTC().Truncate(time.Millisecond).Add(123456 * time.Microsecond)
	motors, _ := e.fitQuad(full, `PT<&>"\`, "L-1", t0)
	odd := e.create("/v1/parts", map[string]any{"kind": "flight_controller", "serial": "FC \u00e9\u2028 1", "lot": "<lot>"})
	if r := e.call("POST", "/v1/airframes/"+full.ID+"/fits", tech, map[string]any{"part_id": odd.ID,
		"position": "flight_controller", "at": t0.Add(time.Hour)}); r.Status != 201 {
		t.Fatalf("fit: %d %s", r.Status, r.Body)
	}
	t1 := t0.Add(24*time.Hour + 500*time.Millisecond)
	if r := e.call("POST", "/v1/airframes/"+full.ID+"/removals", tech, map[string]any{"part_id": motors[1].ID,
		"reason": "bearing noise", "at": t1}); r.Status != 201 {
		t.Fatalf("removal: %d %s", r.Status, r.Body)
	}
	moments := []*time.Time{nil, ptr(t0.Add(-time.Hour)), ptr(t0), ptr(t0.Add(2 * time.Hour)), ptr(t1), ptr(t1.Add(time.Minute))}
	for _, af := range []idBody{bare, full} {
		for _, at := range moments {
			path := "/v1/airframes/" + af.ID + "/fitment"
			if at != nil {
				path += "?at=" + url.QueryEscape(at.Format(time.RFC3339Nano))
			}
			r := e.call("GET", path, fleet.RoleViewer, nil)
			if r.Status != http.StatusOK {
				t.Fatalf("GET %s: %d %s", path, r.Status, r.Body)
			}
			var got store.Fitment
			r.decode(t, &got)
			when := got.At
			if at != nil && !when.Equal(*at) {
				t.Fatalf("at %s, asked %s", when, at)
			}
			want, err := e.db.Fitment(context.Background(), af.ID, when)
			if err != nil {
				t.Fatal(err)
			}
			if len(got.Parts) != len(want.Parts) {
				t.Fatalf("%s: %d parts, decoded path %d", path, len(got.Parts), len(want.Parts))
			}
			var raw struct {
				Parts []struct {
					FittedAt string `json:"fitted_at"`
				} `json:"parts"`
			}
			r.decode(t, &raw)
			for i := range got.Parts {
				// Written as the handler's encoder wrote it before: UTC, RFC 3339, trailing zeros trimmed.
				if w := want.Parts[i].FittedAt.UTC().Format(time.RFC3339Nano); raw.Parts[i].FittedAt != w {
					t.Fatalf("%s: part %d fitted_at written %q, want %q", path, i, raw.Parts[i].FittedAt, w)
				}
				if !got.Parts[i].FittedAt.Equal(want.Parts[i].FittedAt) {
					t.Fatalf("%s: part %d fitted_at %s, decoded path %s", path, i, got.Parts[i].FittedAt, want.Parts[i].FittedAt)
				}
				got.Parts[i].FittedAt, want.Parts[i].FittedAt = time.Time{}, time.Time{}
			}
			got.At, want.At = time.Time{}, time.Time{}
			if !reflect.DeepEqual(got, *want) {
				t.Fatalf("%s:\n%+v\ndecoded path:\n%+v", path, got, *want)
			}
		}
	}
	// An unknown airframe is still a 404 problem.
	if r := e.call("GET", "/v1/airframes/01900000-0000-7000-8000-000000000000/fitment", fleet.RoleViewer, nil); r.Status != 404 {
		t.Fatalf("unknown airframe: %d", r.Status)
	}
}

func ptr[T any](v T) *T { return &v }

// The fitment answer is written into a buffer reused between requests
// (answerBufs); answers written at the same time for different airframes
// each carry their own airframe and parts.
func TestFitmentAnswersAtOnceStayApart(t *testing.T) {
	e := newEnv(t)
	t0 := time.Now().Add(-48 * time.Hour).UTC().Truncate(time.Second)
	var afs []idBody
	want := map[string]string{} // airframe id -> the prefix of its parts' serials
	for i, code := range []string{"AP-01", "AP-02", "AP-03"} {
		af := e.quad(code)
		e.fitQuad(af, code, fmt.Sprintf("L-%d", i), t0)
		afs, want[af.ID] = append(afs, af), code+"-"
	}
	var wg sync.WaitGroup
	errs := make(chan error, 8)
	for g := range 8 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range 40 {
				af := afs[(g+i)%len(afs)]
				req := httptest.NewRequest("GET", "/v1/airframes/"+af.ID+"/fitment", nil)
				req.Header.Set("Authorization", "Bearer "+e.tokens[fleet.RoleViewer])
				rec := httptest.NewRecorder()
				e.h.ServeHTTP(rec, req)
				var got struct {
					AirframeID string `json:"airframe_id"`
					Parts      []struct {
						Serial string `json:"serial"`
					} `json:"parts"`
				}
				if err := json.Unmarshal(rec.Body.Bytes(), &got); err != nil || rec.Code != http.StatusOK {
					errs <- fmt.Errorf("%d %v: %s", rec.Code, err, rec.Body)
					return
				}
				if got.AirframeID != af.ID || len(got.Parts) != 8 || !strings.HasPrefix(got.Parts[0].Serial, want[af.ID]) ||
					!strings.HasPrefix(got.Parts[7].Serial, want[af.ID]) {
					errs <- fmt.Errorf("asked %s, got %s with %d parts: %s", af.ID, got.AirframeID, len(got.Parts), rec.Body)
					return
				}
			}
		}()
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Fatal(err)
	}
}
