package api

import (
	"errors"
	"strings"
	"testing"
	"unicode/utf8"

	"github.com/rotorwright/rotorwright/fleet"
)

// The JSON decoders never panic, refuse only with a client error (never an
// internal one), and what they accept holds no NUL or invalid UTF-8 in any
// string — the text PostgreSQL would refuse with a 500.
// go test -fuzz FuzzDecodeJSON -fuzztime 5m ./api
func FuzzDecodeJSON(f *testing.F) {
	for _, s := range []string{
		`{"airframe_id":"0190f7a0-0000-7000-8000-000000000001","pilot":"A","takeoff_at":"2026-05-14T09:30:00Z","landing_at":"2026-05-14T09:50:00Z","packs":["x"]}`,
		`{"notes":"x","specs":{"rotation":"cw","kv":370}}`,
		`{"code":null}`, `{"takeoff_at":12}`, `{"pilot":"a\u0000b"}`, "{\"pilot\":\"\xff\"}", `{"a":{"b":[1,{"c":"\ud800"}]}}`,
		`[]`, `null`, `{"specs":{"\u0000":1}}`, `{"at":"2026-13-01T00:00:00Z"}`,
	} {
		f.Add([]byte(s))
	}
	clientErr := func(t *testing.T, what string, err error) {
		var fe *fleet.Error
		if err != nil && (!errors.As(err, &fe) || fe.Code != fleet.EINVALID) {
			t.Fatalf("%s: %v is not a client error", what, err)
		}
	}
	clean := func(t *testing.T, what string, ss ...string) {
		for _, s := range ss {
			if !utf8.ValidString(s) || strings.IndexByte(s, 0) >= 0 {
				t.Fatalf("%s accepted unclean text %q", what, s)
			}
		}
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		var in flightInput
		err := strictUnmarshal(b, &in)
		clientErr(t, "flight input", err)
		if err == nil {
			clean(t, "flight input", append([]string{in.AirframeID, in.Pilot, in.Notes}, in.Packs...)...)
		}
		p := fleet.Part{Kind: fleet.KindGimbal, Serial: "S", Specs: []byte(`{}`)}
		err = applyMergePatch(b, &p, partWritable...)
		clientErr(t, "part patch", err)
		if err == nil {
			clean(t, "part patch", p.Serial, p.Notes, p.Lot, p.Maker, p.PartNumber, string(p.Specs))
		}
		var ev eventInput
		clientErr(t, "event input", strictUnmarshal(b, &ev))
		clientErr(t, "query", queryText(string(b)))
	})
}
