package api_test

import (
	"bytes"
	"context"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"os"
	"strings"
	"testing"

	"github.com/getkin/kin-openapi/openapi3"
	"github.com/getkin/kin-openapi/openapi3filter"
	"github.com/getkin/kin-openapi/routers"
	"github.com/getkin/kin-openapi/routers/gorillamux"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/migrations"
	"github.com/rotorwright/rotorwright/openapi"
	"github.com/rotorwright/rotorwright/store"
)

var (
	spec      *openapi3.T
	specRoute routers.Router
)

func TestMain(m *testing.M) {
	loader := openapi3.NewLoader()
	doc, err := loader.LoadFromData(openapi.Spec)
	if err != nil {
		panic("openapi.yaml does not load: " + err.Error())
	}
	spec = doc
	// Flight logs are CSV with '#' comment lines, which a strict RFC 4180
	// reader refuses: check text/csv bodies as text.
	asText := func(r io.Reader, _ http.Header, _ *openapi3.SchemaRef, _ openapi3filter.EncodingFn) (any, error) {
		b, err := io.ReadAll(r)
		return string(b), err
	}
	openapi3filter.RegisterBodyDecoder("text/csv", asText)
	openapi3filter.RegisterBodyDecoder("text/html", asText)
	openapi3filter.RegisterBodyDecoder("application/zip", asText)
	// Match requests on any host: the test server is not the documented one.
	routed := *doc
	routed.Servers = nil
	if specRoute, err = gorillamux.NewRouter(&routed); err != nil {
		panic("openapi router: " + err.Error())
	}
	pgtest.Main(m, migrations.Prepare)
}

// env is a server on a fresh database with one key per role.
type env struct {
	t      *testing.T
	db     *store.DB
	log    *slog.Logger
	h      http.Handler
	srv    *api.Server // behind h
	tokens map[fleet.Role]string
	keys   map[fleet.Role]string // key ids
}

func newEnv(t *testing.T) *env {
	t.Parallel()
	db := store.New(pgtest.NewPool(t))
	log := slog.New(slog.NewTextHandler(os.Stderr, &slog.HandlerOptions{Level: slog.LevelError}))
	srv := api.New(db, log, unlimited(api.DefaultLimits), nil)
	e := &env{t: t, db: db, log: log, h: srv.Handler(), srv: srv,
		tokens: map[fleet.Role]string{}, keys: map[fleet.Role]string{}}
	for _, r := range fleet.Roles {
		k, tok, err := db.CreateKey(context.Background(), "test "+string(r), r)
		if err != nil {
			t.Fatal(err)
		}
		e.tokens[r], e.keys[r] = tok, k.ID
	}
	return e
}

// withLimits is the same environment served with other request limits.
func (e *env) withLimits(rows int, bytes int64) *env {
	c := *e
	c.srv = api.New(e.db, e.log, unlimited(api.Limits{LogRows: rows, LogBytes: bytes}), nil)
	c.h = c.srv.Handler()
	return &c
}

// unlimited turns the rate limits off: tests send requests as fast as they
// can from one address; the limits have tests of their own.
func unlimited(l api.Limits) api.Limits {
	l.RatePerKey, l.RatePerAddr, l.AuthFailures, l.Ingests = -1, -1, -1, 64
	return l
}

// resp is a recorded response.
type resp struct {
	Status int
	Header http.Header
	Body   []byte
}

func (r *resp) decode(t *testing.T, v any) {
	t.Helper()
	if err := json.Unmarshal(r.Body, v); err != nil {
		t.Fatalf("decode %s: %v", r.Body, err)
	}
}

// problem decodes an RFC 9457 body.
func (r *resp) problem(t *testing.T) api.Problem {
	t.Helper()
	if ct := r.Header.Get("Content-Type"); !strings.HasPrefix(ct, "application/problem+json") {
		t.Fatalf("content type %q, want application/problem+json (status %d, body %s)", ct, r.Status, r.Body)
	}
	var p api.Problem
	r.decode(t, &p)
	if p.Status != r.Status {
		t.Fatalf("problem status %d, HTTP status %d", p.Status, r.Status)
	}
	return p
}

// call sends a request through the real router and validates the response
// against the OpenAPI document. body may be nil, a []byte or a value to encode.
func (e *env) call(method, path string, role fleet.Role, body any, headers ...string) *resp {
	e.t.Helper()
	var rd io.Reader
	switch b := body.(type) {
	case nil:
	case []byte:
		rd = bytes.NewReader(b)
	default:
		raw, err := json.Marshal(b)
		if err != nil {
			e.t.Fatal(err)
		}
		rd = bytes.NewReader(raw)
	}
	req := httptest.NewRequest(method, path, rd)
	if body != nil {
		req.Header.Set("Content-Type", "application/json")
	}
	if role != "" {
		req.Header.Set("Authorization", "Bearer "+e.tokens[role])
	}
	for i := 0; i+1 < len(headers); i += 2 {
		req.Header.Set(headers[i], headers[i+1])
	}
	rec := httptest.NewRecorder()
	e.h.ServeHTTP(rec, req)
	r := &resp{Status: rec.Code, Header: rec.Header(), Body: rec.Body.Bytes()}
	validate(e.t, req, r)
	return r
}

// validate checks a response against the document: the route must be
// documented and the body must match the schema of its status.
func validate(t *testing.T, req *http.Request, r *resp) {
	t.Helper()
	if r.Status == http.StatusMethodNotAllowed {
		return // the method is by definition not in the document
	}
	route, params, err := specRoute.FindRoute(req)
	if err != nil {
		if r.Status == http.StatusNotFound {
			return // an undocumented path answered 404, as it should
		}
		t.Fatalf("%s %s is not in openapi.yaml: %v", req.Method, req.URL.Path, err)
	}
	in := &openapi3filter.ResponseValidationInput{
		RequestValidationInput: &openapi3filter.RequestValidationInput{Request: req, PathParams: params, Route: route,
			Options: &openapi3filter.Options{AuthenticationFunc: openapi3filter.NoopAuthenticationFunc}},
		Status:  r.Status,
		Header:  r.Header,
		Body:    io.NopCloser(bytes.NewReader(r.Body)),
		Options: &openapi3filter.Options{IncludeResponseStatus: true},
	}
	if err := openapi3filter.ValidateResponse(context.Background(), in); err != nil {
		t.Fatalf("%s %s -> %d does not match openapi.yaml: %v\nbody: %s", req.Method, req.URL.Path, r.Status, err, r.Body)
	}
}
