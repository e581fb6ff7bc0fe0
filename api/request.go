package api

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// readBody reads a JSON request body under the size limit.
func (s *Server) readBody(c *gin.Context) ([]byte, error) {
	if ct := c.ContentType(); ct != "" && ct != "application/json" && ct != "application/merge-patch+json" {
		return nil, fleet.Errorf(fleet.EINVALID, "send Content-Type: application/json")
	}
	b, err := io.ReadAll(http.MaxBytesReader(c.Writer, c.Request.Body, s.limits.JSONBytes))
	var mbe *http.MaxBytesError
	if errors.As(err, &mbe) {
		return nil, fleet.Errorf(fleet.ETOOLARGE, "request body over %d bytes", s.limits.JSONBytes)
	} else if err != nil {
		return nil, bodyReadError(err, s)
	}
	return b, nil
}

// decodeJSON decodes a JSON object into v, refusing unknown members and
// naming the member at fault.
func (s *Server) decodeJSON(c *gin.Context, v any) error {
	b, err := s.readBody(c)
	if err != nil {
		return err
	}
	return strictUnmarshal(b, v)
}

func strictUnmarshal(b []byte, v any) error {
	if len(bytes.TrimSpace(b)) == 0 {
		return fleet.Errorf(fleet.EINVALID, "the request body is empty; send a JSON object")
	}
	if err := checkJSONText(b); err != nil {
		return err
	}
	var doc map[string]json.RawMessage
	if json.Unmarshal(b, &doc) == nil {
		if err := checkTimes(doc, v); err != nil {
			return err
		}
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	if err := dec.Decode(v); err != nil {
		return jsonError(err)
	}
	if _, err := dec.Token(); !errors.Is(err, io.EOF) {
		return fleet.Errorf(fleet.EINVALID, "send a single JSON object")
	}
	return nil
}

// jsonError names the field at fault. encoding/json has no typed error for an
// unknown member, so that one case reads the message.
func jsonError(err error) error {
	var te *json.UnmarshalTypeError
	var se *json.SyntaxError
	var pe *time.ParseError
	switch {
	case errors.As(err, &te):
		if te.Field == "" {
			return fleet.Errorf(fleet.EINVALID, "the body must be a JSON object")
		}
		return fleet.FieldError(te.Field, "must be of type %s", jsonType(te.Type.String()))
	case errors.As(err, &se):
		return fleet.Errorf(fleet.EINVALID, "malformed JSON at byte %d", se.Offset)
	case errors.As(err, &pe):
		return fleet.Errorf(fleet.EINVALID, "a time is not RFC 3339: %q", pe.Value)
	case errors.Is(err, io.ErrUnexpectedEOF):
		return fleet.Errorf(fleet.EINVALID, "truncated JSON")
	}
	if name, ok := strings.CutPrefix(err.Error(), "json: unknown field "); ok {
		return fleet.FieldError(strings.Trim(name, `"`), "is not a known member")
	}
	var fe *fleet.Error
	if errors.As(err, &fe) {
		return fe
	}
	return fleet.Errorf(fleet.EINVALID, "malformed JSON")
}

func jsonType(goType string) string {
	switch {
	case strings.Contains(goType, "float"), strings.Contains(goType, "int"):
		return "number"
	case strings.Contains(goType, "string"), strings.Contains(goType, "Time"):
		return "string"
	case strings.Contains(goType, "bool"):
		return "boolean"
	case strings.HasPrefix(goType, "[]"):
		return "array"
	}
	return "object"
}

// applyMergePatch applies an RFC 7396 merge patch to in (a domain record),
// limited to the writable top-level members, so read-only ones (id, version,
// status...) cannot be assigned: the patch is laid over in's JSON form and
// decoded back, and validation sees the merged whole.
func applyMergePatch(body []byte, in any, writable ...string) error {
	if err := checkJSONText(body); err != nil {
		return err
	}
	var patch map[string]json.RawMessage
	if err := json.Unmarshal(body, &patch); err != nil || patch == nil {
		return fleet.Errorf(fleet.EINVALID, "send a JSON object")
	}
	ok := map[string]bool{}
	for _, w := range writable {
		ok[w] = true
	}
	curJSON, err := json.Marshal(in)
	if err != nil {
		return err
	}
	var doc map[string]json.RawMessage
	if err := json.Unmarshal(curJSON, &doc); err != nil {
		return err
	}
	for k, v := range patch {
		if !ok[k] {
			if _, known := doc[k]; known {
				return fleet.FieldError(k, "cannot be changed")
			}
			return fleet.FieldError(k, "is not a known member")
		}
		doc[k] = v
	}
	if err := checkNulls(patch, in); err != nil {
		return err
	}
	merged, err := json.Marshal(doc)
	if err != nil {
		return err
	}
	return strictUnmarshal(merged, in)
}

// etag is the strong entity tag of a versioned record.
func etag(version int) string { return fmt.Sprintf(`"%d"`, version) }

// ifMatch returns the version named by If-Match: 428 when absent, 412 when
// not one of ours.
func ifMatch(c *gin.Context) (int, error) {
	h := c.GetHeader("If-Match")
	if h == "" {
		return 0, fleet.Errorf(fleet.EPRECONDREQ, "send If-Match with the ETag you last read")
	}
	v, err := strconv.Atoi(strings.Trim(strings.TrimSpace(h), `"`))
	if err != nil || strings.HasPrefix(strings.TrimSpace(h), "W/") {
		return 0, fleet.Errorf(fleet.EPRECONDITION, "If-Match does not match the current ETag")
	}
	return v, nil
}

// pageOf reads limit and cursor; limits over the maximum are refused.
func pageOf(c *gin.Context) (store.Page, error) {
	p := store.Page{Limit: 50, Cursor: c.Query("cursor")}
	if l := c.Query("limit"); l != "" {
		n, err := strconv.Atoi(l)
		if err != nil || n < 1 {
			return p, fleet.FieldError("limit", "must be a positive integer")
		}
		if n > store.MaxPageSize {
			return p, fleet.FieldError("limit", "must be at most %d", store.MaxPageSize)
		}
		p.Limit = n
	}
	return p, nil
}

// List is the body of every list response.
type List[T any] struct {
	Items      []T    `json:"items"`
	NextCursor string `json:"next_cursor"`
}

// writeList writes a page with its RFC 8288 next link.
func writeList[T any](c *gin.Context, items []T, next string) {
	if items == nil {
		items = []T{}
	}
	if next != "" {
		q := c.Request.URL.Query()
		q.Set("cursor", next)
		u := url.URL{Path: c.Request.URL.Path, RawQuery: q.Encode()}
		c.Header("Link", fmt.Sprintf(`<%s>; rel="next"`, u.String()))
	}
	c.JSON(http.StatusOK, List[T]{Items: items, NextCursor: next})
}

// pathID reads the :id path parameter as a UUID (404 when malformed: no
// such record can exist).
func pathID(c *gin.Context, what string) (string, error) {
	id, err := store.ParseID("id", c.Param("id"))
	if err != nil {
		return "", fleet.Errorf(fleet.ENOTFOUND, "%s not found", what)
	}
	return id, nil
}

// queryID reads an optional UUID query parameter.
func queryID(c *gin.Context, name string) (string, error) {
	v := c.Query(name)
	if v == "" {
		return "", nil
	}
	return store.ParseID(name, v)
}

// queryBool reads an optional true/false query parameter (nil when absent);
// only the two words the OpenAPI boolean allows.
func queryBool(c *gin.Context, name string) (*bool, error) {
	switch v := c.Query(name); v {
	case "":
		return nil, nil
	case "true", "false":
		b := v == "true"
		return &b, nil
	}
	return nil, fleet.FieldError(name, "must be true or false")
}

// queryTime reads an optional RFC 3339 query parameter.
func queryTime(c *gin.Context, name string) (*time.Time, error) {
	v := c.Query(name)
	if v == "" {
		return nil, nil
	}
	t, err := time.Parse(time.RFC3339, v)
	if err != nil {
		return nil, fleet.FieldError(name, "must be an RFC 3339 time")
	}
	return &t, nil
}

// writeOne writes a versioned record with its ETag.
func writeOne(c *gin.Context, status, version int, v any) {
	c.Header("ETag", etag(version))
	c.JSON(status, v)
}

// versioned is a record with an optimistic-concurrency version.
type versioned interface{ ETagVersion() int }

// getOne answers GET of one versioned record by the :id path parameter,
// with its ETag.
func getOne[T versioned](s *Server, c *gin.Context, what string, load func(context.Context, string) (T, error)) {
	id, err := pathID(c, what)
	if err != nil {
		s.fail(c, err)
		return
	}
	v, err := load(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeOne(c, http.StatusOK, v.ETagVersion(), v)
}

// patchInput reads what every PATCH needs: the record id, the If-Match
// version and the merge-patch body. On failure it has answered already.
func (s *Server) patchInput(c *gin.Context, what string) (id string, version int, body []byte, ok bool) {
	id, err := pathID(c, what)
	if err == nil {
		version, err = ifMatch(c)
	}
	if err == nil {
		body, err = s.readBody(c)
	}
	if err == nil {
		err = checkJSONText(body) // before the record is read: a bad body is 400 whatever the id
	}
	if err != nil {
		s.fail(c, err)
		return "", 0, nil, false
	}
	return id, version, body, true
}

// decodeWritable reads a create body onto v (which holds the defaults) with
// the same rules as a merge patch: only writable members may be sent.
func (s *Server) decodeWritable(c *gin.Context, v any, writable ...string) error {
	body, err := s.readBody(c)
	if err != nil {
		return err
	}
	return applyMergePatch(body, v, writable...)
}
