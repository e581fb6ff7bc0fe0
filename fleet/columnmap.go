package fleet

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"
	"time"
	"unicode"

	"github.com/google/uuid"
)

// Time units and origins of a column map's time column.
var (
	TimeUnits   = []string{"s", "ms", "us", "ns"}
	TimeOrigins = []string{OriginStart, OriginEpoch, OriginRFC3339}
	// MapDelimiters are the field separators a map may name.
	MapDelimiters = []string{",", ";", "\t"}
)

// Time origins.
const (
	OriginStart   = "start"   // numbers: time since the log's start
	OriginEpoch   = "epoch"   // numbers: Unix time; the flight starts at the first sample
	OriginRFC3339 = "rfc3339" // an RFC 3339 time string per row
)

// NativeLayout is the name that selects the service's own layout where a
// column map may be named; no map may take it.
const NativeLayout = "native"

// MaxHeaderRow bounds a map's header row (lines before it are skipped).
const MaxHeaderRow = 100

// ColumnMap describes a foreign CSV log layout: where the header is, which
// column holds the time and how, and which source column feeds each of the
// service's own columns, with the unit conversion. It is a versioned record;
// every flight read through a map keeps the map's id and version.
type ColumnMap struct {
	ID        string     `json:"id"`
	Name      string     `json:"name"`
	Delimiter string     `json:"delimiter"`
	HeaderRow int        `json:"header_row"` // 1-based physical line of the header
	Time      MapTime    `json:"time"`
	Columns   MapColumns `json:"columns"` // by target (service column)
	// Detect names header columns whose presence selects this map when an
	// upload names none.
	Detect    []string  `json:"detect"`
	Version   int       `json:"version"`
	CreatedAt time.Time `json:"created_at"`
	UpdatedAt time.Time `json:"updated_at"`
}

// MapTime says how the time column reads.
type MapTime struct {
	Column string `json:"column"`
	Unit   string `json:"unit,omitempty"` // s, ms, us or ns; none for rfc3339
	Origin string `json:"origin"`
}

// MapSource is one target's source column: target = s * scale + offset, with
// s the source value, negated first when Negate is set.
type MapSource struct {
	From   string   `json:"from"`
	Scale  *float64 `json:"scale,omitempty"` // nil: 1
	Offset float64  `json:"offset"`
	Negate bool     `json:"negate"`
}

// MapColumns is the target -> source table. Decoding refuses a target given
// twice (JSON objects may repeat a member; the last would silently win).
type MapColumns map[string]MapSource

// UnmarshalJSON decodes the table, refusing repeated targets and unknown
// members of a source.
func (mc *MapColumns) UnmarshalJSON(b []byte) error {
	if string(bytes.TrimSpace(b)) == "null" {
		*mc = nil // absent; Validate says it is required
		return nil
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	if t, err := dec.Token(); err != nil || t != json.Delim('{') {
		return FieldError("columns", "must be an object of target: {from, scale, offset, negate}")
	}
	out := MapColumns{}
	for dec.More() {
		t, err := dec.Token()
		if err != nil {
			return FieldError("columns", "malformed JSON")
		}
		target := t.(string)
		if _, dup := out[target]; dup {
			return FieldError("columns."+target, "target %s is mapped twice", target)
		}
		var raw json.RawMessage
		if err := dec.Decode(&raw); err != nil {
			return FieldError("columns."+target, "malformed JSON")
		}
		var src MapSource
		sd := json.NewDecoder(bytes.NewReader(raw))
		sd.DisallowUnknownFields()
		if err := sd.Decode(&src); err != nil {
			var te *json.UnmarshalTypeError
			if errors.As(err, &te) && te.Field != "" {
				return FieldError("columns."+target+"."+te.Field, "has the wrong type")
			}
			if name, ok := strings.CutPrefix(err.Error(), "json: unknown field "); ok {
				return FieldError("columns."+target+"."+strings.Trim(name, `"`), "is not a known member (from, scale, offset, negate)")
			}
			return FieldError("columns."+target, "must be an object {from, scale, offset, negate}")
		}
		out[target] = src
	}
	*mc = out
	return nil
}

// ETagVersion is the version an ETag names.
func (m *ColumnMap) ETagVersion() int { return m.Version }

// Targets returns the mapped targets in a stable order.
func (m *ColumnMap) Targets() []string {
	ts := make([]string, 0, len(m.Columns))
	for t := range m.Columns {
		ts = append(ts, t)
	}
	sort.Strings(ts)
	return ts
}

// SetDefaults fills what a map may leave out: comma delimiter, header on
// line 1, seconds since start, scale 1.
func (m *ColumnMap) SetDefaults() {
	if m.Delimiter == "" {
		m.Delimiter = ","
	}
	if m.HeaderRow == 0 {
		m.HeaderRow = 1
	}
	if m.Time.Origin == "" {
		m.Time.Origin = OriginStart
	}
	if m.Time.Unit == "" && m.Time.Origin != OriginRFC3339 {
		m.Time.Unit = "s"
	}
	for t, s := range m.Columns {
		if s.Scale == nil {
			one := 1.0
			s.Scale = &one
			m.Columns[t] = s
		}
	}
	if m.Detect == nil {
		m.Detect = []string{}
	}
}

// Validate fills the defaults and checks a map on its own: every target one
// of the service's columns, the required ones mapped, scale finite and
// nonzero, no source column used twice. Clashes with other maps are
// DetectClash's.
func (m *ColumnMap) Validate() error {
	m.SetDefaults()
	if err := checkText("name", m.Name, 1, 100); err != nil {
		return err
	}
	if strings.TrimSpace(m.Name) != m.Name || strings.IndexFunc(m.Name, unicode.IsControl) >= 0 {
		return FieldError("name", "must not start or end with spaces or hold control characters")
	}
	if strings.EqualFold(m.Name, NativeLayout) {
		return FieldError("name", "%q names the service's own layout; choose another name", NativeLayout)
	}
	if _, err := uuid.Parse(m.Name); err == nil {
		return FieldError("name", "must not be a UUID (uploads name a map by name or id)")
	}
	if !slices.Contains(MapDelimiters, m.Delimiter) {
		return FieldError("delimiter", `must be ",", ";" or a tab`)
	}
	if m.HeaderRow < 1 || m.HeaderRow > MaxHeaderRow {
		return FieldError("header_row", "must be a line number from 1 to %d", MaxHeaderRow)
	}
	if err := checkSource("time.column", m.Time.Column); err != nil {
		return err
	}
	if !slices.Contains(TimeOrigins, m.Time.Origin) {
		return FieldError("time.origin", "must be start, epoch or rfc3339")
	}
	if m.Time.Origin == OriginRFC3339 && m.Time.Unit != "" {
		return FieldError("time.unit", "does not apply to rfc3339 times; leave it out")
	}
	if m.Time.Origin != OriginRFC3339 && !slices.Contains(TimeUnits, m.Time.Unit) {
		return FieldError("time.unit", "must be s, ms, us or ns")
	}
	if len(m.Columns) == 0 {
		return FieldError("columns", "is required: map at least pack_v and pack_a")
	}
	if len(m.Columns) > 200 {
		return FieldError("columns", "at most 200 targets")
	}
	used := map[string]string{m.Time.Column: ColTime}
	has := map[string]bool{ColTime: true}
	for _, t := range m.Targets() {
		s := m.Columns[t]
		f := "columns." + t
		switch {
		case t == ColTime:
			return FieldError(f, "time comes from time.column; do not map t_s")
		case !LogColumn(t):
			return FieldError(f, "%q is not one of the service's log columns", t)
		}
		if err := checkSource(f+".from", s.From); err != nil {
			return err
		}
		if prev, dup := used[s.From]; dup {
			return FieldError(f+".from", "source column %q is already mapped to %s", s.From, prev)
		}
		used[s.From] = t
		if math.IsNaN(*s.Scale) || math.IsInf(*s.Scale, 0) || *s.Scale == 0 {
			return FieldError(f+".scale", "must be a finite, nonzero number")
		}
		if math.IsNaN(s.Offset) || math.IsInf(s.Offset, 0) {
			return FieldError(f+".offset", "must be a finite number")
		}
		has[t] = true
	}
	if col, why := MissingLogColumn(has); col != "" {
		return FieldError("columns."+col, "%s", why)
	}
	if len(m.Detect) > 32 {
		return FieldError("detect", "at most 32 names")
	}
	seen := map[string]bool{}
	for i, d := range m.Detect {
		f := fmt.Sprintf("detect[%d]", i)
		if err := checkSource(f, d); err != nil {
			return err
		}
		if seen[d] {
			return FieldError(f, "%q is listed twice", d)
		}
		seen[d] = true
	}
	if m.detectsNative() {
		return &Error{Code: EUNPROCESSABLE, Field: "detect",
			Message: "every detect name is a column of the service's own layout, so native logs would be read through this map; add a name only this layout has"}
	}
	return nil
}

// checkSource checks a header name as a map gives it.
func checkSource(field, s string) error {
	if err := checkText(field, s, 1, 200); err != nil {
		return err
	}
	if strings.TrimSpace(s) != s {
		return FieldError(field, "must not start or end with spaces (header names are read trimmed)")
	}
	if strings.ContainsAny(s, "\r\n") {
		return FieldError(field, "must be on one line")
	}
	return nil
}

// detectsNative reports whether a comma-separated native log could match
// the detect names: all of them are service column names.
func (m *ColumnMap) detectsNative() bool {
	if len(m.Detect) == 0 || m.Delimiter != "," {
		return false
	}
	for _, d := range m.Detect {
		if !LogColumn(d) {
			return false
		}
	}
	return true
}

// headerNames are the names a log laid out for m carries: the time column,
// every source and the detect names.
func (m *ColumnMap) headerNames() map[string]bool {
	h := map[string]bool{m.Time.Column: true}
	for _, s := range m.Columns {
		h[s.From] = true
	}
	for _, d := range m.Detect {
		h[d] = true
	}
	return h
}

// DetectClash reports whether auto-detection could not tell m from o: with
// the same delimiter, a log laid out for one carries every detect name of
// the other. Maps without detect names are chosen by name only and never clash.
func (m *ColumnMap) DetectClash(o *ColumnMap) bool {
	if len(m.Detect) == 0 || len(o.Detect) == 0 || m.Delimiter != o.Delimiter {
		return false
	}
	covers := func(h map[string]bool, names []string) bool {
		for _, n := range names {
			if !h[n] {
				return false
			}
		}
		return true
	}
	return covers(m.headerNames(), o.Detect) || covers(o.headerNames(), m.Detect)
}
