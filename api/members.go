package api

import (
	"encoding/json"
	"reflect"
	"strings"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// member is a top-level JSON member of a decode target.
type member struct {
	name string
	typ  reflect.Type
}

// membersOf lists the JSON members of the struct v points to.
func membersOf(v any) map[string]member {
	t := reflect.TypeOf(v)
	for t != nil && t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	out := map[string]member{}
	if t == nil || t.Kind() != reflect.Struct {
		return out
	}
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		if name == "-" || !f.IsExported() {
			continue
		}
		if name == "" {
			name = f.Name
		}
		out[name] = member{name: name, typ: f.Type}
	}
	return out
}

var timeType = reflect.TypeOf(time.Time{})

// checkTimes names the member when a time member of v is sent as anything
// but an RFC 3339 string (encoding/json reports these without the member).
func checkTimes(doc map[string]json.RawMessage, v any) error {
	for name, m := range membersOf(v) {
		t := m.typ
		if t.Kind() == reflect.Pointer {
			t = t.Elem()
		}
		raw, ok := doc[name]
		if t != timeType || !ok || string(raw) == "null" {
			continue
		}
		var s string
		if err := json.Unmarshal(raw, &s); err != nil {
			return fleet.FieldError(name, "must be an RFC 3339 time as a string, such as 2026-05-14T09:30:00Z")
		}
		if _, err := time.Parse(time.RFC3339, s); err != nil {
			return fleet.FieldError(name, "must be an RFC 3339 time, such as 2026-05-14T09:30:00Z")
		}
	}
	return nil
}

// checkNulls refuses null for a member that cannot be absent (a string,
// number or boolean): in a merge patch null means "remove", and a required
// member cannot be removed. Pointers, slices and maps may be null.
func checkNulls(patch map[string]json.RawMessage, v any) error {
	ms := membersOf(v)
	for name, raw := range patch {
		m, ok := ms[name]
		if !ok || string(raw) != "null" {
			continue
		}
		switch m.typ.Kind() {
		case reflect.Pointer, reflect.Slice, reflect.Map, reflect.Interface:
		default:
			return fleet.FieldError(name, "cannot be null: it is required")
		}
	}
	return nil
}
