package main

import (
	"runtime/debug"
	"strings"
)

// version describes this binary from the build information the Go toolchain
// records: the module version ("(devel)" when built from a source tree
// rather than a tagged module) and the VCS commit, when the build stamped it
// (go build in a git checkout does; go run and go test do not).
func version() string {
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return "(devel), commit unknown (no build information)"
	}
	return describeBuild(bi)
}

func describeBuild(bi *debug.BuildInfo) string {
	v := bi.Main.Version
	if v == "" {
		v = "(devel)"
	}
	var rev, at string
	modified := false
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.time":
			at = s.Value
		case "vcs.modified":
			modified = s.Value == "true"
		}
	}
	var b strings.Builder
	b.WriteString(v)
	if rev == "" {
		b.WriteString(", commit unknown")
	} else {
		b.WriteString(", commit " + rev)
		if at != "" {
			b.WriteString(" (" + at + ")")
		}
		if modified {
			b.WriteString(" with uncommitted changes")
		}
	}
	b.WriteString(", " + bi.GoVersion)
	return b.String()
}
