package api

import (
	"bytes"
	"encoding/json"
	"errors"
	"io"
	"net/url"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
)

// PostgreSQL text cannot hold NUL and the service keeps text as UTF-8, so a
// NUL, invalid UTF-8 or an unpaired UTF-16 surrogate escape in any string of
// a request is refused up front with the member or parameter named, instead
// of reaching the database (SQLSTATE 22021, a 500) or being silently
// replaced by U+FFFD (encoding/json's behaviour).

// badText says what is wrong with a decoded string and its raw JSON bytes,
// or "" when it is fine.
func badText(s string, raw []byte) string {
	switch {
	case !utf8.Valid(raw):
		return "is not valid UTF-8"
	case strings.IndexByte(s, 0) >= 0:
		return "contains a NUL character"
	case strings.ContainsRune(s, utf8.RuneError) && !bytes.Contains(raw, []byte("\uFFFD")) &&
		!bytes.Contains(bytes.ToLower(raw), []byte(`\ufffd`)):
		return "contains an unpaired UTF-16 surrogate escape"
	}
	return ""
}

// checkJSONText walks a JSON document and refuses the first string (member
// names included) that is not clean text, naming its member as a path such
// as "specs.firmware" or "packs[1]". Syntax errors are left to the decoder.
func checkJSONText(b []byte) error {
	type frame struct {
		object  bool
		wantKey bool
		key     string
		index   int
	}
	var stack []frame
	path := func() string {
		var sb strings.Builder
		for _, f := range stack {
			if f.object {
				if sb.Len() > 0 {
					sb.WriteByte('.')
				}
				sb.WriteString(f.key)
			} else {
				sb.WriteString("[" + strconv.Itoa(f.index) + "]")
			}
		}
		return sb.String()
	}
	valueDone := func() {
		if n := len(stack); n > 0 {
			if stack[n-1].object {
				stack[n-1].wantKey = true
			} else {
				stack[n-1].index++
			}
		}
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.UseNumber()
	var prev int64
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) || err != nil {
			return nil
		}
		end := dec.InputOffset()
		raw := b[prev:end]
		prev = end
		switch t := tok.(type) {
		case json.Delim:
			switch t {
			case '{', '[':
				stack = append(stack, frame{object: t == '{', wantKey: t == '{'})
			default:
				stack = stack[:len(stack)-1]
				valueDone()
			}
		case string:
			top := len(stack) - 1
			if top >= 0 && stack[top].object && stack[top].wantKey {
				if msg := badText(t, raw); msg != "" {
					stack[top].key = strings.ToValidUTF8(strings.ReplaceAll(t, "\x00", ""), "")
					return fleet.FieldError(path(), "member name %s", msg)
				}
				stack[top].key, stack[top].wantKey = t, false
				continue
			}
			if msg := badText(t, raw); msg != "" {
				name := path()
				if name == "" {
					name = "body"
				}
				return fleet.FieldError(name, "%s", msg)
			}
			valueDone()
		default:
			valueDone()
		}
	}
}

// checkQuery refuses a query string that does not parse, or a parameter
// whose name or value is not clean text, naming the parameter.
func (s *Server) checkQuery() gin.HandlerFunc {
	return func(c *gin.Context) {
		if err := queryText(c.Request.URL.RawQuery); err != nil {
			s.fail(c, err)
			return
		}
		c.Next()
	}
}

func queryText(raw string) error {
	if raw == "" {
		return nil
	}
	q, err := url.ParseQuery(raw)
	if err != nil {
		return fleet.Errorf(fleet.EINVALID, "the query string is malformed: %s", queryErr(err))
	}
	for k, vs := range q {
		if msg := badText(k, []byte(k)); msg != "" {
			return fleet.FieldError(strings.ToValidUTF8(strings.ReplaceAll(k, "\x00", ""), ""), "parameter name %s", msg)
		}
		for _, v := range vs {
			if msg := badText(v, []byte(v)); msg != "" {
				return fleet.FieldError(k, "%s", msg)
			}
		}
	}
	return nil
}

// queryErr is the parse error without echoing the raw input.
func queryErr(err error) string {
	var ee url.EscapeError
	if errors.As(err, &ee) {
		return "a %-escape is invalid"
	}
	return "it cannot be parsed"
}

// headerText refuses a header kept as text (stored or logged) that is not
// clean printable text.
func headerText(name, v string) error {
	if msg := badText(v, []byte(v)); msg != "" {
		return fleet.FieldError(name, "%s", msg)
	}
	for _, r := range v {
		if r < 0x20 || r == 0x7f {
			return fleet.FieldError(name, "contains a control character")
		}
	}
	return nil
}
