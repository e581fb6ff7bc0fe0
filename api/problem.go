package api

import (
	"context"
	"errors"
	"log/slog"
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
)

// StatusClientGone is the status logged (and counted in the metrics, never
// sent) for a request whose client went away before the answer; the number
// is the common convention for it.
const StatusClientGone = 499

const (
	ctxClientGone  = "client_gone"
	ctxProblemCode = "problem_code" // the code of the problem a request was answered with
)

// statusOf maps each fleet error code to one HTTP status.
var statusOf = map[string]int{
	fleet.EINVALID:       http.StatusBadRequest,
	fleet.EUNPROCESSABLE: http.StatusUnprocessableEntity,
	fleet.ENOTFOUND:      http.StatusNotFound,
	fleet.ECONFLICT:      http.StatusConflict,
	fleet.EFORBIDDEN:     http.StatusForbidden,
	fleet.EUNAUTHORIZED:  http.StatusUnauthorized,
	fleet.EPRECONDITION:  http.StatusPreconditionFailed,
	fleet.EPRECONDREQ:    http.StatusPreconditionRequired,
	fleet.ETOOLARGE:      http.StatusRequestEntityTooLarge,
	fleet.EUNAVAILABLE:   http.StatusServiceUnavailable,
	fleet.ETOOMANY:       http.StatusTooManyRequests,
	fleet.ETIMEOUT:       http.StatusRequestTimeout,
	fleet.EINTERNAL:      http.StatusInternalServerError,
}

// Problem is an RFC 9457 problem details object.
type Problem struct {
	Type     string         `json:"type"`
	Title    string         `json:"title"`
	Status   int            `json:"status"`
	Detail   string         `json:"detail"`
	Instance string         `json:"instance"`
	Code     string         `json:"code"`
	Field    string         `json:"field,omitempty"`
	Line     int            `json:"line,omitempty"`
	Column   string         `json:"column,omitempty"`
	Errors   []ProblemError `json:"errors,omitempty"`
}

// ProblemError locates one fault by JSON pointer (RFC 6901).
type ProblemError struct {
	Pointer string `json:"pointer"`
	Detail  string `json:"detail"`
}

// fail renders err as a problem and aborts the request. Errors that are not
// domain errors are logged in full and reach the client as "internal error".
func (s *Server) fail(c *gin.Context, err error) {
	if ctxErr := c.Request.Context().Err(); errors.Is(ctxErr, context.Canceled) {
		// The client went away: no one reads an answer, and the failure
		// that followed (a cancelled query) is not the service's.
		c.Set(ctxClientGone, true)
		s.log.Info("client went away", "status", StatusClientGone, "method", c.Request.Method,
			"path", c.Request.URL.Path, "request_id", c.GetString(ctxRequestID), "err", err)
		c.Abort()
		return
	}
	code := fleet.ErrorCode(err)
	status := statusOf[code]
	if status == 0 {
		status = http.StatusInternalServerError
	}
	p := Problem{
		Type:     "/problems/" + code,
		Title:    http.StatusText(status),
		Status:   status,
		Detail:   fleet.ErrorMessage(err),
		Instance: c.Request.URL.Path,
		Code:     code,
	}
	var fe *fleet.Error
	if errors.As(err, &fe) {
		p.Field, p.Line, p.Column = fe.Field, fe.Line, fe.Column
		if fe.RetryAfter > 0 {
			c.Header("Retry-After", strconv.Itoa(int(math.Ceil(fe.RetryAfter.Seconds()))))
		}
		if fe.Field != "" {
			p.Errors = []ProblemError{{Pointer: pointer(fe.Field), Detail: fe.Message}}
		}
	}
	if status == http.StatusInternalServerError {
		p.Code, p.Type, p.Detail = fleet.EINTERNAL, "/problems/internal", "internal error"
		s.log.Error("request failed", "err", err, "method", c.Request.Method, "path", c.Request.URL.Path,
			"request_id", c.GetString(ctxRequestID), "client_request_id", c.GetString(ctxClientRequestID))
	} else if status == http.StatusServiceUnavailable {
		s.dbState.suspect(c.Request.Context())
		s.log.Warn("request unavailable", "detail", p.Detail, "method", c.Request.Method, "path", c.Request.URL.Path,
			"request_id", c.GetString(ctxRequestID), "err", err)
	} else {
		s.log.Debug("request refused", "code", code, "detail", p.Detail, "path", c.Request.URL.Path)
	}
	switch status {
	case http.StatusUnauthorized:
		c.Header("WWW-Authenticate", `Bearer realm="rotorwright"`)
	case http.StatusServiceUnavailable, http.StatusTooManyRequests:
		if c.Writer.Header().Get("Retry-After") == "" {
			c.Header("Retry-After", "5") // seconds: a database restart or a full queue passes soon
		}
	}
	c.Set(ctxProblemCode, p.Code)
	c.Header("Content-Type", "application/problem+json")
	c.AbortWithStatusJSON(status, p)
}

// pointer turns a field path such as "specs.bearing.count" or "packs[1]"
// into a JSON pointer.
func pointer(field string) string {
	if strings.HasPrefix(field, "line ") {
		return ""
	}
	r := strings.NewReplacer(".", "/", "[", "/", "]", "")
	return "/" + r.Replace(field)
}

// recovery turns a panic into a 500 problem without leaking it.
func (s *Server) recovery() gin.HandlerFunc {
	return func(c *gin.Context) {
		defer func() {
			if r := recover(); r != nil {
				if r == http.ErrAbortHandler {
					panic(r)
				}
				s.log.Error("panic", "panic", r, "path", c.Request.URL.Path, slog.String("request_id", c.GetString(ctxRequestID)))
				s.fail(c, errors.New("panic"))
			}
		}()
		c.Next()
	}
}
