package health

import gojson "github.com/goccy/go-json"

// DecodeView decodes a stored health view. The due list decodes every
// subject's view (a motor's carries its bearing-life series, a pack's its
// capacity and resistance series) on each recompute; goccy/go-json does it
// several times faster than encoding/json, to the same values
// (TestDecodeViewAsStdlib).
func DecodeView(raw []byte) (*View, error) {
	var v View
	return &v, gojson.Unmarshal(raw, &v)
}
