package ingest

import (
	"bytes"
	"compress/gzip"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"io"
	"sync/atomic"
	"testing"

	"github.com/rotorwright/rotorwright/telemetry"
)

// A stored log written by compress reads back byte for byte through the
// standard library's gzip reader (the format every stored log has had), and
// through Decompress; a stopped compression ends without output.
func TestCompressIsStandardGzip(t *testing.T) {
	text := simLog90k()[:3<<20+12345] // over three chunks, not a whole number of them
	z, err := compress(text, nil)
	if err != nil {
		t.Fatal(err)
	}
	r, err := gzip.NewReader(bytes.NewReader(z))
	if err != nil {
		t.Fatal(err)
	}
	back, err := io.ReadAll(r)
	if err != nil || !bytes.Equal(back, text) {
		t.Fatalf("stdlib gzip reads back %d bytes (%v), want the %d written", len(back), err, len(text))
	}
	if back, err := Decompress(z); err != nil || !bytes.Equal(back, text) {
		t.Fatalf("Decompress: %d bytes, %v", len(back), err)
	}
	var stop atomic.Bool
	stop.Store(true)
	if out, err := compress(text, &stop); !errors.Is(err, errStopped) || out != nil {
		t.Fatalf("stopped compression: %d bytes, %v", len(out), err)
	}
	p := startCompress(text)
	if out, err := p.wait(); err != nil || !bytes.Equal(out, z) {
		t.Fatalf("compression beside the parse: %d bytes, %v; want the same %d bytes", len(out), err, len(z))
	}
}

// A log's digest is the SHA-256 of its text (taken beside the parse), for a
// gzip upload too.
func TestReadLogDigestIsOfTheText(t *testing.T) {
	text := []byte("t_s,pack_v,pack_a\n0,25,1\n1,25,1\n")
	own, err := ReadLog(text, false, telemetry.Limits{}, native)
	if err != nil {
		t.Fatal(err)
	}
	if want := sha256.Sum256(text); own.SHA256 != hex.EncodeToString(want[:]) {
		t.Fatalf("ReadLog digest %s", own.SHA256)
	}
	// A gzip upload's digest is of its text, not of the bytes sent.
	z, _ := compress(text, nil)
	gz, err := ReadLog(z, false, telemetry.Limits{}, native)
	if err != nil || gz.SHA256 != own.SHA256 {
		t.Fatalf("gzip upload digest %s (%v), want the text's %s", gz.SHA256, err, own.SHA256)
	}
}
