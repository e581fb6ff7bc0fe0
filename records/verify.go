package records

import (
	"archive/zip"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"sort"
)

// Report is what verify found: the manifest read and, when the bundle fails,
// the first fault.
type Report struct {
	Manifest *Manifest
	Checked  int    // files whose size and SHA-256 matched
	Fault    string // empty when the bundle is intact
}

// Verify checks a bundle: the zip reads cleanly (entry checksums), the
// manifest names this format, and every file is listed once with the size
// and SHA-256 it has, with nothing unlisted. It stops at the first fault.
func Verify(r io.ReaderAt, size int64) (*Report, error) {
	rep := &Report{}
	zr, err := zip.NewReader(r, size)
	if err != nil {
		rep.Fault = "not a readable zip: " + err.Error()
		return rep, nil
	}
	byName := map[string]*zip.File{}
	for _, f := range zr.File {
		if _, dup := byName[f.Name]; dup {
			rep.Fault = fmt.Sprintf("%s appears twice in the zip", f.Name)
			return rep, nil
		}
		byName[f.Name] = f
	}
	mf, ok := byName[ManifestName]
	if !ok {
		rep.Fault = "no " + ManifestName
		return rep, nil
	}
	rc, err := mf.Open()
	if err != nil {
		rep.Fault = ManifestName + ": " + err.Error()
		return rep, nil
	}
	raw, err := io.ReadAll(rc)
	rc.Close()
	if err != nil {
		rep.Fault = ManifestName + ": " + err.Error()
		return rep, nil
	}
	var m Manifest
	if err := json.Unmarshal(raw, &m); err != nil {
		rep.Fault = ManifestName + " is not valid JSON: " + err.Error()
		return rep, nil
	}
	rep.Manifest = &m
	if m.Format != Format {
		rep.Fault = fmt.Sprintf("format %q, want %q", m.Format, Format)
		return rep, nil
	}
	listed := map[string]bool{}
	for _, want := range m.Files {
		if listed[want.Name] {
			rep.Fault = fmt.Sprintf("%s is listed twice in the manifest", want.Name)
			return rep, nil
		}
		listed[want.Name] = true
		f, ok := byName[want.Name]
		if !ok {
			rep.Fault = fmt.Sprintf("%s is listed in the manifest but missing", want.Name)
			return rep, nil
		}
		n, sum, err := digest(f)
		switch {
		case err != nil:
			rep.Fault = fmt.Sprintf("%s does not read back: %v", want.Name, err)
		case n != want.Bytes:
			rep.Fault = fmt.Sprintf("%s has %d bytes, the manifest says %d", want.Name, n, want.Bytes)
		case sum != want.SHA256:
			rep.Fault = fmt.Sprintf("%s has SHA-256 %s, the manifest says %s", want.Name, sum, want.SHA256)
		}
		if rep.Fault != "" {
			return rep, nil
		}
		rep.Checked++
	}
	var extra []string
	for name := range byName {
		if name != ManifestName && !listed[name] {
			extra = append(extra, name)
		}
	}
	if len(extra) > 0 {
		sort.Strings(extra)
		rep.Fault = fmt.Sprintf("%s is in the zip but not in the manifest", extra[0])
	}
	return rep, nil
}

func digest(f *zip.File) (int64, string, error) {
	rc, err := f.Open()
	if err != nil {
		return 0, "", err
	}
	defer rc.Close()
	h := sha256.New()
	n, err := io.Copy(h, rc) // the zip reader checks the entry's CRC-32 at its end
	return n, hex.EncodeToString(h.Sum(nil)), err
}
