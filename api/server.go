// Package api is the REST API: the gin router, handlers, authentication,
// problem errors and request limits.
package api

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"log/slog"
	"net/http"
	"strconv"
	"strings"
	"sync/atomic"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/openapi"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/telemetry"
	"github.com/rotorwright/rotorwright/web"
)

// Limits bound what one request may send.
type Limits struct {
	JSONBytes int64 // request bodies other than log uploads
	LogBytes  int64 // one uploaded flight log
	LogRows   int   // data rows of one flight log
	// IdempotencyLease is how long an Idempotency-Key claim holds without
	// renewal: a retry after a crash or a lost client waits at most this.
	IdempotencyLease time.Duration
	// Rates in requests per second (burst twice that) per API key and per
	// client address; 0 takes the default, a negative rate is no limit.
	RatePerKey, RatePerAddr float64
	// AuthFailures failed authentications from one address within
	// AuthLockout lock it out for AuthLockout (negative: never).
	AuthFailures int
	AuthLockout  time.Duration
	// Ingests is how many log uploads run at once.
	Ingests int
	// MinBodyRate (bytes per second) applies to every request body after
	// BodyGrace; negative: no minimum.
	MinBodyRate int
	BodyGrace   time.Duration
	// TrustedProxies may set X-Forwarded-For; none by default, so the
	// per-address limits see the connection's own address.
	TrustedProxies []string
	// MetricsToken, when set, must be sent as a bearer token to read
	// /metrics; MetricsElsewhere takes /metrics off the API's address
	// (the command serves MetricsHandler on an address of its own).
	MetricsToken     string
	MetricsElsewhere bool
}

// withDefaults fills zero fields with the defaults; negative rates and
// counts mean "off" and become zero.
func (l Limits) withDefaults() Limits {
	d := DefaultLimits
	if l.JSONBytes == 0 {
		l.JSONBytes = d.JSONBytes
	}
	if l.LogBytes == 0 {
		l.LogBytes = d.LogBytes
	}
	if l.LogRows == 0 {
		l.LogRows = d.LogRows
	}
	if l.IdempotencyLease <= 0 {
		l.IdempotencyLease = d.IdempotencyLease
	}
	pick := func(v, def float64) float64 {
		switch {
		case v == 0:
			return def
		case v < 0:
			return 0
		}
		return v
	}
	l.RatePerKey = pick(l.RatePerKey, d.RatePerKey)
	l.RatePerAddr = pick(l.RatePerAddr, d.RatePerAddr)
	l.AuthFailures = int(pick(float64(l.AuthFailures), float64(d.AuthFailures)))
	l.MinBodyRate = int(pick(float64(l.MinBodyRate), float64(d.MinBodyRate)))
	if l.AuthLockout <= 0 {
		l.AuthLockout = d.AuthLockout
	}
	if l.Ingests <= 0 {
		l.Ingests = d.Ingests
	}
	if l.BodyGrace <= 0 {
		l.BodyGrace = d.BodyGrace
	}
	return l
}

// DefaultLimits are the limits of DESIGN section 8.
var DefaultLimits = Limits{JSONBytes: 1 << 20, LogBytes: 64 << 20, LogRows: 2_000_000, IdempotencyLease: 30 * time.Second,
	RatePerKey: defaultRatePerKey, RatePerAddr: defaultRatePerAddr, AuthFailures: defaultAuthFailures,
	AuthLockout: defaultAuthLockout, Ingests: defaultIngests, MinBodyRate: defaultMinBodyRate, BodyGrace: bodyGrace}

// Server holds the handlers' dependencies.
type Server struct {
	db      *store.DB
	log     *slog.Logger
	limits  Limits
	ingest  *ingest.Ingester
	health  *health.Service
	prog    *schedule.Programme
	metrics *Metrics
	dbState *dbState
	figures *dbFigures // the metrics' figures from the database
	limit   *limiters
	engine  *gin.Engine
	board   *web.Board
	keys    *keyCache
	// exports holds a slot per records bundle being written (airframeRecords).
	exports chan struct{}
	// sessionTTL is how long a board sign-in lasts.
	sessionTTL time.Duration
}

// Route is one API route and the least role that may call it; Public routes
// need no token; Board routes are pages that need a board session (any role).
type Route struct {
	Method  string
	Path    string // gin syntax: /v1/airframes/:id
	Role    fleet.Role
	Public  bool
	Board   bool
	handler func(*Server, *gin.Context)
}

// Routes is the route table: the router is built from it and the tests walk it.
var Routes = []Route{
	{Method: "GET", Path: "/healthz", Public: true, handler: (*Server).healthz},
	{Method: "GET", Path: "/readyz", Public: true, handler: (*Server).readyz},
	{Method: "GET", Path: "/openapi.yaml", Public: true, handler: (*Server).openapiDoc},
	{Method: "GET", Path: "/metrics", Public: true, handler: (*Server).metricsHandler},

	{Method: "GET", Path: "/sign-in", Public: true, handler: (*Server).signInPage},
	{Method: "POST", Path: "/sign-in", Public: true, handler: (*Server).signIn},
	{Method: "POST", Path: "/sign-out", Public: true, handler: (*Server).signOut},
	{Method: "GET", Path: "/assets/:file", Public: true, handler: (*Server).asset},
	{Method: "GET", Path: "/", Board: true, handler: (*Server).boardFleet},
	{Method: "GET", Path: "/airframes/:code", Board: true, handler: (*Server).boardAirframe},
	{Method: "GET", Path: "/parts/:id", Board: true, handler: (*Server).boardPart},
	{Method: "GET", Path: "/flights/:id", Board: true, handler: (*Server).boardFlight},
	{Method: "GET", Path: "/jobs/:code", Board: true, handler: (*Server).boardJob},
	{Method: "GET", Path: "/jobs/:code/manifest.csv", Board: true, handler: (*Server).boardJobCSV},
	{Method: "GET", Path: "/plan", Board: true, handler: (*Server).boardPlan},
	{Method: "GET", Path: "/plan.csv", Board: true, handler: (*Server).boardPlanCSV},
	{Method: "GET", Path: "/queue", Board: true, handler: (*Server).boardQueue},
	{Method: "GET", Path: "/check", Board: true, handler: (*Server).boardCheck},

	{Method: "GET", Path: "/v1/layouts", Role: fleet.RoleViewer, handler: (*Server).listLayouts},
	{Method: "POST", Path: "/v1/layouts", Role: fleet.RoleTechnician, handler: (*Server).createLayout},

	{Method: "GET", Path: "/v1/airframes", Role: fleet.RoleViewer, handler: (*Server).listAirframes},
	{Method: "POST", Path: "/v1/airframes", Role: fleet.RoleTechnician, handler: (*Server).createAirframe},
	{Method: "GET", Path: "/v1/airframes/:id", Role: fleet.RoleViewer, handler: (*Server).getAirframe},
	{Method: "PATCH", Path: "/v1/airframes/:id", Role: fleet.RoleTechnician, handler: (*Server).patchAirframe},
	{Method: "DELETE", Path: "/v1/airframes/:id", Role: fleet.RoleAdmin, handler: (*Server).retireAirframe},
	{Method: "GET", Path: "/v1/airframes/:id/fitment", Role: fleet.RoleViewer, handler: (*Server).getFitment},
	{Method: "POST", Path: "/v1/airframes/:id/fits", Role: fleet.RoleTechnician, handler: (*Server).createFit},
	{Method: "POST", Path: "/v1/airframes/:id/removals", Role: fleet.RoleTechnician, handler: (*Server).createRemoval},
	{Method: "GET", Path: "/v1/airframes/:id/trends", Role: fleet.RoleViewer, handler: (*Server).airframeTrends},
	{Method: "GET", Path: "/v1/airframes/:id/records", Role: fleet.RoleTechnician, handler: (*Server).airframeRecords},

	{Method: "GET", Path: "/v1/parts", Role: fleet.RoleViewer, handler: (*Server).listParts},
	{Method: "POST", Path: "/v1/parts", Role: fleet.RoleTechnician, handler: (*Server).createPart},
	{Method: "GET", Path: "/v1/parts/:id", Role: fleet.RoleViewer, handler: (*Server).getPart},
	{Method: "PATCH", Path: "/v1/parts/:id", Role: fleet.RoleTechnician, handler: (*Server).patchPart},
	{Method: "GET", Path: "/v1/parts/:id/history", Role: fleet.RoleViewer, handler: (*Server).partHistory},
	{Method: "GET", Path: "/v1/parts/:id/health", Role: fleet.RoleViewer, handler: (*Server).partHealth},
	{Method: "GET", Path: "/v1/parts/:id/checks", Role: fleet.RoleViewer, handler: (*Server).listPackChecks},
	{Method: "POST", Path: "/v1/parts/:id/checks", Role: fleet.RolePilot, handler: (*Server).createPackCheck},
	{Method: "GET", Path: "/v1/parts/:id/software", Role: fleet.RoleViewer, handler: (*Server).partSoftware},

	{Method: "GET", Path: "/v1/jobs", Role: fleet.RoleViewer, handler: (*Server).listJobs},
	{Method: "POST", Path: "/v1/jobs", Role: fleet.RoleTechnician, handler: (*Server).createJob},
	{Method: "GET", Path: "/v1/jobs/:id", Role: fleet.RoleViewer, handler: (*Server).getJob},
	{Method: "PATCH", Path: "/v1/jobs/:id", Role: fleet.RoleTechnician, handler: (*Server).patchJob},
	{Method: "GET", Path: "/v1/jobs/:id/manifest", Role: fleet.RoleViewer, handler: (*Server).jobManifest},

	{Method: "GET", Path: "/v1/flights", Role: fleet.RoleViewer, handler: (*Server).listFlights},
	{Method: "POST", Path: "/v1/flights", Role: fleet.RolePilot, handler: (*Server).createFlight},
	{Method: "GET", Path: "/v1/flights/:id", Role: fleet.RoleViewer, handler: (*Server).getFlight},
	{Method: "GET", Path: "/v1/flights/:id/log", Role: fleet.RoleViewer, handler: (*Server).getFlightLog},

	{Method: "GET", Path: "/v1/column-maps", Role: fleet.RoleViewer, handler: (*Server).listColumnMaps},
	{Method: "POST", Path: "/v1/column-maps", Role: fleet.RoleTechnician, handler: (*Server).createColumnMap},
	{Method: "GET", Path: "/v1/column-maps/:id", Role: fleet.RoleViewer, handler: (*Server).getColumnMap},
	{Method: "PATCH", Path: "/v1/column-maps/:id", Role: fleet.RoleTechnician, handler: (*Server).patchColumnMap},
	{Method: "DELETE", Path: "/v1/column-maps/:id", Role: fleet.RoleTechnician, handler: (*Server).deleteColumnMap},

	{Method: "GET", Path: "/v1/trace", Role: fleet.RoleViewer, handler: (*Server).trace},

	{Method: "GET", Path: "/v1/events", Role: fleet.RoleViewer, handler: (*Server).listEvents},
	{Method: "POST", Path: "/v1/events", Role: fleet.RolePilot, handler: (*Server).createEvent},
	{Method: "GET", Path: "/v1/events/:id", Role: fleet.RoleViewer, handler: (*Server).getEvent},
	{Method: "PATCH", Path: "/v1/events/:id", Role: fleet.RolePilot, handler: (*Server).patchEvent},

	{Method: "GET", Path: "/v1/keys", Role: fleet.RoleAdmin, handler: (*Server).listKeys},
	{Method: "POST", Path: "/v1/keys", Role: fleet.RoleAdmin, handler: (*Server).createKey},
	{Method: "DELETE", Path: "/v1/keys/:id", Role: fleet.RoleAdmin, handler: (*Server).revokeKey},

	{Method: "GET", Path: "/v1/audit", Role: fleet.RoleAdmin, handler: (*Server).listAudit},

	{Method: "GET", Path: "/v1/service-rules", Role: fleet.RoleViewer, handler: (*Server).listRules},
	{Method: "POST", Path: "/v1/service-rules", Role: fleet.RoleAdmin, handler: (*Server).createRule},
	{Method: "GET", Path: "/v1/service-rules/:id", Role: fleet.RoleViewer, handler: (*Server).getRule},
	{Method: "PATCH", Path: "/v1/service-rules/:id", Role: fleet.RoleAdmin, handler: (*Server).patchRule},
	{Method: "DELETE", Path: "/v1/service-rules/:id", Role: fleet.RoleAdmin, handler: (*Server).deleteRule},
	{Method: "GET", Path: "/v1/work-records", Role: fleet.RoleViewer, handler: (*Server).listWorkRecords},
	{Method: "POST", Path: "/v1/work-records", Role: fleet.RoleTechnician, handler: (*Server).createWorkRecord},
	{Method: "GET", Path: "/v1/discrepancies", Role: fleet.RoleViewer, handler: (*Server).listDiscrepancies},
	{Method: "GET", Path: "/v1/notices", Role: fleet.RoleViewer, handler: (*Server).listNotices},
	{Method: "POST", Path: "/v1/notices", Role: fleet.RoleTechnician, handler: (*Server).createNotice},
	{Method: "GET", Path: "/v1/notices/:id", Role: fleet.RoleViewer, handler: (*Server).getNotice},
	{Method: "PATCH", Path: "/v1/notices/:id", Role: fleet.RoleTechnician, handler: (*Server).patchNotice},
	{Method: "DELETE", Path: "/v1/notices/:id", Role: fleet.RoleAdmin, handler: (*Server).withdrawNotice},
	{Method: "GET", Path: "/v1/notices/:id/compliance", Role: fleet.RoleViewer, handler: (*Server).noticeCompliance},
	{Method: "POST", Path: "/v1/notices/:id/decisions", Role: fleet.RoleTechnician, handler: (*Server).decideNotApplicable},
	{Method: "DELETE", Path: "/v1/notices/:id/decisions/:subject_id", Role: fleet.RoleAdmin, handler: (*Server).withdrawDecision},
	{Method: "GET", Path: "/v1/due", Role: fleet.RoleViewer, handler: (*Server).listDue},
	{Method: "GET", Path: "/v1/airframes/:id/readiness", Role: fleet.RoleViewer, handler: (*Server).readiness},
	{Method: "GET", Path: "/v1/forecast/parts", Role: fleet.RoleViewer, handler: (*Server).partsForecast},
	{Method: "GET", Path: "/v1/reports/monthly", Role: fleet.RoleViewer, handler: (*Server).monthlyReport},
}

// New builds the server and its router. prog may be nil for the default
// programme (the app passes the one whose status changes feed the outbox).
func New(db *store.DB, log *slog.Logger, limits Limits, prog *schedule.Programme) *Server {
	limits = limits.withDefaults()
	hs := health.New(db)
	board, err := web.New()
	if err != nil {
		panic("board templates: " + err.Error()) // embedded: a build defect, caught by the tests
	}
	s := &Server{db: db, log: log, limits: limits, health: hs, prog: prog, metrics: newMetrics(), limit: newLimiters(limits),
		board: board, sessionTTL: DefaultSessionTTL, keys: newKeyCache(db, keyCacheTTL),
		exports: make(chan struct{}, max(1, int(db.Pool().Config().MaxConns)/2))}
	if s.prog == nil {
		s.prog = schedule.NewProgramme(db, hs)
	}
	s.dbState = &dbState{log: log, up: s.metrics.dbUp, ping: db.Ping}
	s.figures = newDBFigures(db.OpsFigures, s.dbState)
	s.metrics.reg.MustRegister(s.figures, newPoolStats(db.Pool()))
	s.ingest = &ingest.Ingester{DB: db, Health: hs, Judge: s.prog.JudgeTakeoff,
		Limits: telemetry.Limits{MaxRows: limits.LogRows, MaxBytes: limits.LogBytes},
		After: func(ctx context.Context, f *fleet.Flight, fresh *health.Refreshing) error {
			s.afterFlight(ctx, f, fresh)
			return nil
		}}
	gin.SetMode(gin.ReleaseMode)
	e := gin.New()
	e.HandleMethodNotAllowed = true
	e.ContextWithFallback = true
	if err := e.SetTrustedProxies(limits.TrustedProxies); err != nil {
		log.Error("trusted proxies", "err", err) // checked at start-up by the command
	}
	e.Use(s.accessLog(), s.metrics.observe(), s.recovery(), s.requestID(), s.limitAddr(), s.minBodyRate(), s.checkQuery())
	for _, r := range Routes {
		h := r.handler
		chain := []gin.HandlerFunc{}
		switch {
		case r.Board:
			chain = append(chain, s.boardSession())
		case !r.Public:
			chain = append(chain, s.authenticate(r.Role))
		}
		if r.Method == http.MethodPost && !r.Public && !r.Board {
			limit := limits.JSONBytes
			if r.Path == "/v1/flights" {
				limit = limits.LogBytes + limits.JSONBytes
				chain = append(chain, s.metrics.observeIngest(), s.capIngests()) // before any of the body is read
			}
			chain = append(chain, s.idempotency(limit))
		}
		chain = append(chain, func(c *gin.Context) { h(s, c) })
		e.Handle(r.Method, r.Path, chain...)
	}
	e.NoRoute(func(c *gin.Context) { s.fail(c, fleet.Errorf(fleet.ENOTFOUND, "no such route")) })
	e.NoMethod(func(c *gin.Context) {
		c.Header("Allow", strings.Join(allowed(c.Request.URL.Path), ", "))
		c.Header("Content-Type", "application/problem+json")
		c.AbortWithStatusJSON(http.StatusMethodNotAllowed, Problem{Type: "/problems/method_not_allowed",
			Title: "Method Not Allowed", Status: 405, Detail: "method not allowed on this route",
			Instance: c.Request.URL.Path, Code: "method_not_allowed"})
	})
	s.engine = e
	return s
}

// Handler returns the HTTP handler.
func (s *Server) Handler() http.Handler { return s.engine }

// HTTPServer returns the http.Server the service listens with: the handler
// and the connection's time limits and header size. The lookup benchmark
// serves through it too, so its per-request deadlines are measured.
func (s *Server) HTTPServer() *http.Server {
	return &http.Server{
		Handler:           s.engine,
		ReadHeaderTimeout: 10 * time.Second,
		ReadTimeout:       5 * time.Minute, // log uploads may be large
		WriteTimeout:      2 * time.Minute,
		IdleTimeout:       2 * time.Minute,
		MaxHeaderBytes:    64 << 10,
	}
}

// Close stops the listener behind the key cache (started by the first
// authentication); call it when the server is done.
func (s *Server) Close() { s.keys.close() }

// allowed lists the methods the route table has for a concrete path.
func allowed(path string) []string {
	var out []string
	for _, r := range Routes {
		if matchPath(r.Path, path) {
			out = append(out, r.Method)
		}
	}
	return out
}

func matchPath(pattern, path string) bool {
	ps, xs := strings.Split(pattern, "/"), strings.Split(path, "/")
	if len(ps) != len(xs) {
		return false
	}
	for i := range ps {
		if !strings.HasPrefix(ps[i], ":") && ps[i] != xs[i] {
			return false
		}
	}
	return true
}

const (
	ctxRequestID       = "request_id"
	ctxClientRequestID = "client_request_id"
	ctxKey             = "api_key"
	ctxClientAddr      = "client_addr"
)

// clientAddr is c.ClientIP(), worked out once per request: the access line,
// the per-address limit and the authentication lockout all ask for it.
func clientAddr(c *gin.Context) string {
	if v, ok := c.Get(ctxClientAddr); ok {
		return v.(string)
	}
	addr := c.ClientIP()
	c.Set(ctxClientAddr, addr)
	return addr
}

// requestID gives every request an id of our own (in X-Request-ID on the
// response, the logs and the audit log). A client's X-Request-ID is kept
// beside it, never in its place: the client chooses it, so it cannot
// identify a request on its own.
func (s *Server) requestID() gin.HandlerFunc {
	return func(c *gin.Context) {
		id := requestIDs.next()
		c.Set(ctxRequestID, id)
		c.Header("X-Request-ID", id)
		if client := c.GetHeader("X-Request-ID"); client != "" {
			if len(client) > 200 {
				s.fail(c, fleet.FieldError("X-Request-ID", "must be at most 200 characters"))
				return
			}
			if err := headerText("X-Request-ID", client); err != nil {
				s.fail(c, err)
				return
			}
			c.Set(ctxClientRequestID, client)
		}
		c.Next()
	}
}

// requestIDs numbers the process's requests after a random prefix drawn
// once at start: 16 hex digits from crypto/rand, a dash and the count in
// hex. Ids are unique within the process (the counter) and across
// processes and restarts unless two draw the same 64-bit prefix, far less
// likely than two of the former per-request random ids colliding, since
// processes are far fewer than requests. They cannot be guessed before one
// of the process's ids is seen; they are for correlation, not secrets, and
// the count tells whoever sees two ids how many requests the process served
// between them. Drawing 8 bytes from crypto/rand per request cost about
// 0.4 % of the process's CPU in the lookups benchmark; the counter also makes
// ids unique within the process for certain.
var requestIDs = newIDSource()

type idSource struct {
	prefix [17]byte // 16 hex digits and the dash
	n      atomic.Uint64
}

func newIDSource() *idSource {
	var b [8]byte
	_, _ = rand.Read(b[:]) // never fails on Linux (crypto/rand panics if the kernel cannot give it)
	s := &idSource{}
	hex.Encode(s.prefix[:16], b[:])
	s.prefix[16] = '-'
	return s
}

func (s *idSource) next() string {
	var b [17 + 16]byte
	out := strconv.AppendUint(append(b[:0], s.prefix[:]...), s.n.Add(1), 16)
	return string(out)
}

// authenticate checks the bearer token on every call and the role the route
// needs, and sets the audit actor. Keys come from the key cache (a revoked
// key stops working at once: see keyCache).
func (s *Server) authenticate(min fleet.Role) gin.HandlerFunc {
	return func(c *gin.Context) {
		if s.limit.auth != nil {
			if locked, wait := s.limit.auth.lockedOut(clientAddr(c)); locked {
				s.fail(c, tooMany("too many failed authentications from this address", wait))
				return
			}
		}
		h := c.GetHeader("Authorization")
		token, ok := strings.CutPrefix(h, "Bearer ")
		if !ok || strings.TrimSpace(token) == "" {
			s.fail(c, fleet.Errorf(fleet.EUNAUTHORIZED, "send Authorization: Bearer <token>"))
			return
		}
		k, err := s.keys.authenticate(c.Request.Context(), strings.TrimSpace(token))
		if err != nil {
			if s.limit.auth != nil && fleet.ErrorCode(err) == fleet.EUNAUTHORIZED {
				s.limit.auth.failed(clientAddr(c), s.limit.authWindow)
			}
			s.fail(c, err)
			return
		}
		if err := s.limitKey(k.ID); err != nil {
			s.fail(c, err)
			return
		}
		if !k.Role.AtLeast(min) {
			s.fail(c, fleet.Errorf(fleet.EFORBIDDEN, "role %s may not do this; it needs %s", k.Role, min))
			return
		}
		c.Set(ctxKey, k)
		ctx := store.WithActor(c.Request.Context(), store.Actor{
			KeyID: k.ID, Name: k.Name, RequestID: c.GetString(ctxRequestID), ClientRequestID: c.GetString(ctxClientRequestID),
			Method: c.Request.Method, Route: c.FullPath(), Role: k.Role,
		})
		c.Request = c.Request.WithContext(ctx)
		c.Next()
	}
}

func (s *Server) healthz(c *gin.Context) { c.JSON(http.StatusOK, gin.H{"status": "ok"}) }

func (s *Server) readyz(c *gin.Context) {
	ctx, cancel := context.WithTimeout(c.Request.Context(), 2e9)
	defer cancel()
	if err := s.db.Ping(ctx); err != nil {
		s.fail(c, err)
		return
	}
	c.JSON(http.StatusOK, gin.H{"status": "ready"})
}

func (s *Server) openapiDoc(c *gin.Context) {
	c.Data(http.StatusOK, "application/yaml", openapi.Spec)
}
