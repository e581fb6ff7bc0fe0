package api

import (
	"bytes"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/web"
)

// sessionCookie names the board's session cookie. It holds a random session
// token (never the API token); the database keeps only its hash.
const sessionCookie = "rw_session"

// DefaultSessionTTL is how long a board session lasts: a working day.
const DefaultSessionTTL = 12 * time.Hour

// boardHeaders are sent with every board response.
func boardHeaders(c *gin.Context) {
	h := c.Writer.Header()
	h.Set("Content-Security-Policy", web.ContentSecurityPolicy)
	h.Set("X-Content-Type-Options", "nosniff")
	h.Set("Referrer-Policy", "same-origin")
	h.Set("Cache-Control", "no-store")
}

// boardSession lets a request through with a live session (its key becomes
// the request's key and audit actor) and sends anyone else to sign in.
func (s *Server) boardSession() gin.HandlerFunc {
	return func(c *gin.Context) {
		boardHeaders(c)
		ck, err := c.Request.Cookie(sessionCookie)
		if err != nil || ck.Value == "" {
			c.Redirect(http.StatusSeeOther, "/sign-in")
			c.Abort()
			return
		}
		k, _, err := s.db.SessionKey(c.Request.Context(), ck.Value)
		if fleet.ErrorCode(err) == fleet.EUNAUTHORIZED {
			s.clearSession(c)
			c.Redirect(http.StatusSeeOther, "/sign-in")
			c.Abort()
			return
		} else if err != nil {
			s.boardFail(c, err)
			return
		}
		c.Set(ctxKey, k)
		c.Request = c.Request.WithContext(store.WithActor(c.Request.Context(), store.Actor{
			KeyID: k.ID, Name: k.Name, RequestID: c.GetString(ctxRequestID), Method: c.Request.Method, Route: c.FullPath(),
		}))
		c.Next()
	}
}

func (s *Server) signInPage(c *gin.Context) {
	boardHeaders(c)
	s.renderPage(c, http.StatusOK, web.Page{Name: "signin", Title: "Sign in", Data: signInData{}})
}

type signInData struct{ Error string }

// signIn takes a pasted token from the form, opens a session for its key and
// sends the browser to the fleet page. The token is never put in a URL.
func (s *Server) signIn(c *gin.Context) {
	boardHeaders(c)
	if !sameOrigin(c.Request) {
		s.renderPage(c, http.StatusForbidden, web.Page{Name: "signin", Title: "Sign in",
			Data: signInData{Error: "This form may only be sent from the board itself."}})
		return
	}
	// The same per-address lockout as bearer tokens (authenticate): a
	// pasted token is a guess like any other.
	addr := clientAddr(c)
	if s.limit.auth != nil {
		if locked, wait := s.limit.auth.lockedOut(addr); locked {
			secs := int(math.Ceil(max(wait, time.Second).Seconds()))
			c.Header("Retry-After", strconv.Itoa(secs))
			s.renderPage(c, http.StatusTooManyRequests, web.Page{Name: "signin", Title: "Sign in", Data: signInData{
				Error: fmt.Sprintf("Too many failed sign-ins from this address: try again in %d s.", secs)}})
			return
		}
	}
	c.Request.Body = http.MaxBytesReader(c.Writer, c.Request.Body, 4<<10)
	token := strings.TrimSpace(c.PostForm("token"))
	if token == "" {
		s.renderPage(c, http.StatusBadRequest, web.Page{Name: "signin", Title: "Sign in",
			Data: signInData{Error: "Paste an API token."}})
		return
	}
	k, err := s.db.Authenticate(c.Request.Context(), token)
	if fleet.ErrorCode(err) == fleet.EUNAUTHORIZED {
		if s.limit.auth != nil {
			s.limit.auth.failed(addr, s.limit.authWindow)
		}
		s.renderPage(c, http.StatusUnauthorized, web.Page{Name: "signin", Title: "Sign in",
			Data: signInData{Error: "That token is unknown or revoked."}})
		return
	} else if err != nil {
		s.boardFail(c, err)
		return
	}
	ctx := store.WithActor(c.Request.Context(), store.Actor{KeyID: k.ID, Name: k.Name,
		RequestID: c.GetString(ctxRequestID), Method: c.Request.Method, Route: c.FullPath()})
	sessionToken, sess, err := s.db.CreateSession(ctx, k.ID, s.sessionTTL)
	if err != nil {
		s.boardFail(c, err)
		return
	}
	http.SetCookie(c.Writer, &http.Cookie{Name: sessionCookie, Value: sessionToken, Path: "/",
		Expires: sess.ExpiresAt, MaxAge: int(time.Until(sess.ExpiresAt).Seconds()),
		HttpOnly: true, SameSite: http.SameSiteStrictMode, Secure: c.Request.TLS != nil})
	c.Redirect(http.StatusSeeOther, "/")
}

// signOut ends the session and clears the cookie.
func (s *Server) signOut(c *gin.Context) {
	boardHeaders(c)
	if !sameOrigin(c.Request) {
		c.String(http.StatusForbidden, "sign-out may only be sent from the board itself")
		return
	}
	if ck, err := c.Request.Cookie(sessionCookie); err == nil && ck.Value != "" {
		if err := s.db.EndSession(c.Request.Context(), ck.Value); err != nil {
			s.boardFail(c, err)
			return
		}
	}
	s.clearSession(c)
	c.Redirect(http.StatusSeeOther, "/sign-in")
}

func (s *Server) clearSession(c *gin.Context) {
	http.SetCookie(c.Writer, &http.Cookie{Name: sessionCookie, Value: "", Path: "/", MaxAge: -1,
		HttpOnly: true, SameSite: http.SameSiteStrictMode, Secure: c.Request.TLS != nil})
}

// sameOrigin refuses cross-site form posts (login CSRF; the cookie's
// SameSite=Strict already keeps it off other sites' requests): a browser
// sends Origin with every POST, which must name this host.
func sameOrigin(r *http.Request) bool {
	o := r.Header.Get("Origin")
	if o == "" || o == "null" {
		return r.Header.Get("Sec-Fetch-Site") != "cross-site"
	}
	u, err := url.Parse(o)
	return err == nil && u.Host == r.Host
}

// renderPage writes a board page with the signed-in key's name.
func (s *Server) renderPage(c *gin.Context, status int, p web.Page) {
	if v, ok := c.Get(ctxKey); ok {
		k := v.(*fleet.APIKey)
		p.Who = k.Name + " · " + string(k.Role)
	}
	p.Now = time.Now().UTC()
	var buf bytes.Buffer
	if err := s.board.Render(&buf, p); err != nil {
		s.log.Error("board page", "page", p.Name, "err", err)
		c.String(http.StatusInternalServerError, "internal error")
		c.Abort()
		return
	}
	c.Data(status, "text/html; charset=utf-8", buf.Bytes())
}

// boardFail renders an error as a board page: the problem's status and a
// plain message (internal errors are logged, never shown).
func (s *Server) boardFail(c *gin.Context, err error) {
	code := fleet.ErrorCode(err)
	status := statusOf[code]
	msg := fleet.ErrorMessage(err)
	if status == 0 || status == http.StatusInternalServerError {
		status, msg = http.StatusInternalServerError, "Something went wrong on the server; it has been logged."
		s.log.Error("board request failed", "err", err, "path", c.Request.URL.Path, "request_id", c.GetString(ctxRequestID))
	}
	s.renderPage(c, status, web.Page{Name: "problem", Title: http.StatusText(status), Data: msg})
	c.Abort()
}

func (s *Server) asset(c *gin.Context) {
	b, ct, ok := web.Asset(c.Param("file"))
	if !ok {
		s.fail(c, fleet.Errorf(fleet.ENOTFOUND, "no such asset"))
		return
	}
	c.Header("Cache-Control", "public, max-age=3600")
	c.Header("X-Content-Type-Options", "nosniff")
	c.Data(http.StatusOK, ct, b)
}
