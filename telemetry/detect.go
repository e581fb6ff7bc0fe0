package telemetry

import (
	"bytes"
	"strings"

	"github.com/rotorwright/rotorwright/fleet"
)

// DetectBytes is how much of a log's start Detect needs to see.
const DetectBytes = 256 << 10

// Detect returns the maps, among those with detect names, whose header row
// in head (the first bytes of a log, up to DetectBytes) holds every one of
// their detect names. One match selects that map; none, the native layout;
// more than one cannot be told apart and the caller must be told a map.
func Detect(head []byte, maps []*fleet.ColumnMap) []*fleet.ColumnMap {
	head = bytes.TrimPrefix(head, []byte("\xEF\xBB\xBF"))
	var lines [][]byte
	for len(head) > 0 && len(lines) < fleet.MaxHeaderRow {
		line := head
		if i := bytes.IndexByte(head, '\n'); i >= 0 {
			line, head = head[:i], head[i+1:]
		} else {
			head = nil
		}
		lines = append(lines, bytes.TrimSuffix(line, []byte{'\r'}))
	}
	var out []*fleet.ColumnMap
	for _, m := range maps {
		if len(m.Detect) == 0 || m.HeaderRow < 1 || m.HeaderRow > len(lines) {
			continue
		}
		if headerHas(lines[m.HeaderRow-1], m.Delimiter[0], m.Detect) {
			out = append(out, m)
		}
	}
	return out
}

// headerHas reports whether the header line, split at delim, names every
// one of names. A header whose quotes span lines is taken as it stands.
func headerHas(line []byte, delim byte, names []string) bool {
	sp := splitter{delim: delim}
	var fs [][]byte
	if bytes.IndexByte(line, '"') < 0 {
		fs = sp.split(line)
	} else if q, _, why := sp.splitQuoted(line); why == "" {
		fs = q
	}
	have := make(map[string]bool, len(fs))
	for _, f := range fs {
		have[strings.TrimSpace(string(f))] = true
	}
	for _, n := range names {
		if !have[n] {
			return false
		}
	}
	return true
}
