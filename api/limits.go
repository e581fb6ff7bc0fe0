package api

import (
	"errors"
	"io"
	"mime"
	"net/http"
	"os"
	"strconv"
	"sync"
	"time"

	"github.com/gin-gonic/gin"
	"golang.org/x/time/rate"

	"github.com/rotorwright/rotorwright/fleet"
)

// Defaults of the rate limits and the body rate (common practice for a
// small internal service, not from any standard; configurable).
const (
	defaultRatePerKey   = 20 // requests per second per API key, burst twice that
	defaultRatePerAddr  = 50 // requests per second per client address, burst twice that
	defaultAuthFailures = 10 // failed authentications per address before a lockout...
	defaultIngests      = 2  // log uploads at once (each may hold its log in memory twice)
	defaultMinBodyRate  = 64 << 10
	bodyGrace           = 10 * time.Second // before the minimum body rate applies
)

const defaultAuthLockout = 5 * time.Minute // ...within this window, locked out for as long

// keyed holds one token bucket per key (an API key id or a client
// address), forgetting buckets idle for ten minutes so the map stays small.
type keyed struct {
	mu      sync.Mutex
	r       rate.Limit
	burst   int
	buckets map[string]*bucket
	swept   time.Time
}

type bucket struct {
	lim         *rate.Limiter
	seen        time.Time
	lockedUntil time.Time // auth lockout only
}

func newKeyed(perSecond float64, burst int) *keyed {
	return &keyed{r: rate.Limit(perSecond), burst: burst, buckets: map[string]*bucket{}}
}

func (k *keyed) get(key string, now time.Time) *bucket {
	if now.Sub(k.swept) > time.Minute {
		for id, b := range k.buckets {
			if now.Sub(b.seen) > 10*time.Minute && now.After(b.lockedUntil) {
				delete(k.buckets, id)
			}
		}
		k.swept = now
	}
	b := k.buckets[key]
	if b == nil {
		b = &bucket{lim: rate.NewLimiter(k.r, k.burst)}
		k.buckets[key] = b
	}
	b.seen = now
	return b
}

// allow takes a token for key, or says how long until one is free.
func (k *keyed) allow(key string) (bool, time.Duration) {
	if k == nil {
		return true, 0
	}
	k.mu.Lock()
	defer k.mu.Unlock()
	now := time.Now()
	r := k.get(key, now).lim.ReserveN(now, 1)
	if d := r.DelayFrom(now); d > 0 {
		r.CancelAt(now)
		return false, d
	}
	return true, 0
}

// lockedOut says whether an address is locked out after failed
// authentications, and for how long yet.
func (k *keyed) lockedOut(addr string) (bool, time.Duration) {
	k.mu.Lock()
	defer k.mu.Unlock()
	now := time.Now()
	b := k.get(addr, now)
	if now.Before(b.lockedUntil) {
		return true, b.lockedUntil.Sub(now)
	}
	return false, 0
}

// failed records a failed authentication; the failure that empties the
// address's allowance locks it out for the window.
func (k *keyed) failed(addr string, window time.Duration) {
	k.mu.Lock()
	defer k.mu.Unlock()
	now := time.Now()
	b := k.get(addr, now)
	if !b.lim.AllowN(now, 1) {
		b.lockedUntil = now.Add(window)
	}
}

func tooMany(what string, wait time.Duration) error {
	return &fleet.Error{Code: fleet.ETOOMANY, Message: what, RetryAfter: max(wait, time.Second)}
}

// limiters are the server's rate limiters; nil fields are off.
type limiters struct {
	perKey, perAddr, auth *keyed
	authWindow            time.Duration
	ingests               chan struct{}
}

func newLimiters(l Limits) *limiters {
	out := &limiters{authWindow: l.AuthLockout, ingests: make(chan struct{}, l.Ingests)}
	if l.RatePerKey > 0 {
		out.perKey = newKeyed(l.RatePerKey, int(2*l.RatePerKey)+1)
	}
	if l.RatePerAddr > 0 {
		out.perAddr = newKeyed(l.RatePerAddr, int(2*l.RatePerAddr)+1)
	}
	if l.AuthFailures > 0 {
		out.auth = newKeyed(float64(l.AuthFailures)/l.AuthLockout.Seconds(), l.AuthFailures)
	}
	return out
}

// limitAddr applies the per-address limit to every route but /healthz (a
// liveness probe must always answer).
func (s *Server) limitAddr() gin.HandlerFunc {
	return func(c *gin.Context) {
		if s.limit.perAddr == nil || c.Request.URL.Path == "/healthz" {
			c.Next()
			return
		}
		if ok, wait := s.limit.perAddr.allow(clientAddr(c)); !ok {
			s.fail(c, tooMany("too many requests from this address", wait))
			return
		}
		c.Next()
	}
}

// limitKey applies the per-key limit after authentication.
func (s *Server) limitKey(keyID string) error {
	if ok, wait := s.limit.perKey.allow(keyID); !ok {
		return tooMany("too many requests with this key", wait)
	}
	return nil
}

// capIngests admits at most Limits.Ingests log uploads at once; the next is
// told to come back (503 with Retry-After) before any of its body is read,
// so a burst of large uploads cannot take the memory of all of them.
func (s *Server) capIngests() gin.HandlerFunc {
	return func(c *gin.Context) {
		mt, _, _ := mime.ParseMediaType(c.GetHeader("Content-Type"))
		if mt != "multipart/form-data" {
			c.Next()
			return
		}
		select {
		case s.limit.ingests <- struct{}{}:
			defer func() { <-s.limit.ingests }()
			c.Next()
		default:
			s.fail(c, &fleet.Error{Code: fleet.EUNAVAILABLE, RetryAfter: 10 * time.Second,
				Message: "the server is busy with other log uploads; retry shortly"})
		}
	}
}

// minBodyRate cuts a request body that arrives slower than the minimum
// rate once the grace time has passed (408), so a slow sender cannot hold a
// connection and a handler for minutes. The connection's read deadline is
// kept just ahead of what the rate allows, so a sender that stops sending
// altogether is cut too.
func (s *Server) minBodyRate() gin.HandlerFunc {
	return func(c *gin.Context) {
		if c.Request.Body != nil && c.Request.Body != http.NoBody && s.limits.MinBodyRate > 0 {
			c.Request.Body = &rateReader{r: c.Request.Body, start: time.Now(), grace: s.limits.BodyGrace,
				rate: float64(s.limits.MinBodyRate), rc: http.NewResponseController(c.Writer)}
		}
		c.Next()
	}
}

// errBodyTooSlow is the error of a body cut for arriving too slowly.
var errBodyTooSlow = errors.New("request body arrived too slowly")

type rateReader struct {
	r     io.ReadCloser
	start time.Time
	grace time.Duration
	rate  float64 // bytes per second
	n     int64
	rc    *http.ResponseController
	done  bool
}

// due is when n bytes must have arrived.
func (b *rateReader) due(n int64) time.Time {
	return b.start.Add(b.grace + time.Duration(float64(n)/b.rate*float64(time.Second)))
}

func (b *rateReader) Read(p []byte) (int, error) {
	if b.done {
		return b.r.Read(p)
	}
	_ = b.rc.SetReadDeadline(b.due(b.n + int64(len(p)))) // unsupported in tests: the check below still holds
	n, err := b.r.Read(p)
	b.n += int64(n)
	if err != nil {
		// Done with the body: clear the deadline, or the server's check
		// for a closed connection would take it for one.
		_ = b.rc.SetReadDeadline(time.Time{})
		b.done = true
		if errors.Is(err, os.ErrDeadlineExceeded) {
			return n, errBodyTooSlow
		}
		return n, err
	}
	if time.Now().After(b.due(b.n)) {
		_ = b.rc.SetReadDeadline(time.Time{})
		b.done = true
		return n, errBodyTooSlow
	}
	return n, nil
}

func (b *rateReader) Close() error { return b.r.Close() }

// bodyReadError is the client error for a body that could not be read.
func bodyReadError(err error, s *Server) error {
	if errors.Is(err, errBodyTooSlow) {
		return &fleet.Error{Code: fleet.ETIMEOUT, Message: "the request body arrived too slowly: after " +
			s.limits.BodyGrace.String() + " it must average at least " + byteRate(s.limits.MinBodyRate)}
	}
	return fleet.Errorf(fleet.EINVALID, "could not read the request body")
}

func byteRate(n int) string {
	if n%1024 == 0 {
		return strconv.Itoa(n/1024) + " KiB/s"
	}
	return strconv.Itoa(n) + " B/s"
}
