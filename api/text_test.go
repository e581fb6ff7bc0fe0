package api_test

import (
	"net/http"
	"net/http/httptest"
	"sort"
	"strings"
	"testing"
)

// Every string member of every documented JSON request body and every
// documented query parameter, sent with a NUL, invalid UTF-8 or an
// unpaired surrogate escape, is refused with 400 naming that member or
// parameter (before the fix the database refused it: SQLSTATE 22021, a 500).
func TestNULAndInvalidUTF8Refused(t *testing.T) {
	e := newEnv(t)
	bad := []struct{ name, json, query string }{
		{"NUL", `"a\u0000b"`, "a%00b"},
		{"invalid UTF-8", "\"a\xffb\"", "a%FFb"},
		{"unpaired surrogate", `"a\ud800b"`, ""},
	}
	paths := spec.Paths.Map()
	keys := make([]string, 0, len(paths))
	for k := range paths {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	fields, params := 0, 0
	for _, p := range keys {
		path := strings.ReplaceAll(p, "{id}", someID)
		for method, op := range paths[p].Operations() {
			for _, pr := range op.Parameters {
				if pr.Value == nil || pr.Value.In != "query" {
					continue
				}
				params++
				for _, b := range bad {
					if b.query == "" {
						continue
					}
					r := e.call(method, path+"?"+pr.Value.Name+"="+b.query, admin, nil)
					if pb := r.problem(t); r.Status != 400 || pb.Field != pr.Value.Name {
						t.Errorf("%s %s?%s=%s: %d field %q, want 400 naming it", method, p, pr.Value.Name, b.query, r.Status, pb.Field)
					}
				}
			}
			if op.RequestBody == nil || op.RequestBody.Value.Content.Get("application/json") == nil {
				continue
			}
			sch := op.RequestBody.Value.Content.Get("application/json").Schema.Value
			for name, prop := range sch.Properties {
				var wrap func(string) string
				var want string
				switch ty := prop.Value.Type; {
				case ty.Includes("string"):
					wrap, want = func(s string) string { return s }, name
				case ty.Includes("array"):
					wrap, want = func(s string) string { return "[" + s + "]" }, name+"[0]"
				case ty.Includes("object"):
					wrap, want = func(s string) string { return `{"k":` + s + "}" }, name+".k"
				default:
					continue
				}
				fields++
				for _, b := range bad {
					body := []byte(`{"` + name + `":` + wrap(b.json) + `}`)
					r := e.call(method, path, admin, body, "If-Match", `"1"`)
					if pb := r.problem(t); r.Status != 400 || pb.Field != want {
						t.Errorf("%s %s %s in %s: %d field %q (%s), want 400 naming %s", method, p, b.name, name, r.Status, pb.Field, pb.Detail, want)
					}
				}
			}
		}
	}
	// The issue counted 37 fields and 15 parameters that answered 500.
	if fields < 37 || params < 15 {
		t.Fatalf("walked %d body members and %d query parameters; the document must have shrunk", fields, params)
	}
	t.Logf("walked %d body members and %d query parameters", fields, params)

	// A member name and a nested member are named by their path.
	r := e.call("POST", "/v1/parts", tech, []byte(`{"kind":"gimbal","serial":"G1","specs":{"fw":{"a\u0000":1}}}`))
	if p := r.problem(t); r.Status != 400 || !strings.HasPrefix(p.Field, "specs.fw.a") {
		t.Fatalf("NUL in a member name: %d %q", r.Status, p.Field)
	}
	// The flight part of an upload, and a header that is stored.
	body, ct := multipartBody(t, map[string]any{"pilot": "A\u0000B"}, []byte("t_s,pack_v,pack_a\n0,25,1\n"))
	req := httptest.NewRequest("POST", "/v1/flights", strings.NewReader(string(body)))
	req.Header.Set("Content-Type", ct)
	req.Header.Set("Authorization", "Bearer "+e.tokens[pilot])
	rec := httptest.NewRecorder()
	e.h.ServeHTTP(rec, req)
	if rec.Code != http.StatusBadRequest || !strings.Contains(rec.Body.String(), `"field":"pilot"`) {
		t.Fatalf("NUL in the flight part: %d %s", rec.Code, rec.Body)
	}
	r = e.call("POST", "/v1/jobs", tech, map[string]any{"code": "J1", "client": "c"}, "Idempotency-Key", "k\xff")
	if p := r.problem(t); r.Status != 400 || p.Field != "Idempotency-Key" {
		t.Fatalf("invalid UTF-8 in Idempotency-Key: %d %q", r.Status, p.Field)
	}
	// Clean text still passes, U+FFFD sent on purpose included.
	if r := e.call("POST", "/v1/jobs", tech, map[string]any{"code": "J2", "client": "Ünïcode \uFFFD ok"}); r.Status != 201 {
		t.Fatalf("clean text: %d %s", r.Status, r.Body)
	}
}
