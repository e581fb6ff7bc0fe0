package ingest

import (
	"bytes"
	"compress/gzip"
	"errors"
	"fmt"
	"io"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/telemetry"
)

func gz(t testing.TB, b []byte) []byte {
	t.Helper()
	var buf bytes.Buffer
	w := gzip.NewWriter(&buf)
	if _, err := w.Write(b); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func native(head []byte) (*fleet.ColumnMap, error) { return nil, nil }

// countingReader counts the bytes read from it.
type countingReader struct {
	r io.Reader
	n int
}

func (c *countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n += n
	return n, err
}

// A small gzip upload that inflates far past the byte limit (1 GiB of text
// from about 1 MB: gzip members, RFC 1952 section 2.2, each a megabyte of
// one byte) is refused at the limit, having read only the start of the
// compressed data.
func TestGzipBombRefusedWithoutInflatingIt(t *testing.T) {
	member := gz(t, bytes.Repeat([]byte{'x'}, 1<<20))
	bomb := gz(t, []byte("t_s,pack_v,pack_a\n0,16.8,1\n# "))
	bomb = append(bomb, bytes.Repeat(member, 1024)...)
	lim := telemetry.Limits{MaxRows: 1000, MaxBytes: 4 << 20}
	src := &countingReader{r: bytes.NewReader(bomb)}
	_, err := readGzip(src, lim, native)
	var fe *fleet.Error
	if !errors.As(err, &fe) || fe.Code != fleet.EUNPROCESSABLE || !strings.Contains(fe.Message, "larger than the limit") {
		t.Fatalf("err %v, want the byte-limit refusal", err)
	}
	// The text read is the limit plus buffers: 4 MiB of text is 4 members.
	if frac := float64(src.n) / float64(len(bomb)); frac > 0.01 {
		t.Fatalf("read %d of %d compressed bytes (%.1f %%) before refusing", src.n, len(bomb), 100*frac)
	}
	t.Logf("refused after reading %d of %d compressed bytes (1 GiB of text)", src.n, len(bomb))
	// Through ReadLog too, recognised by its magic bytes alone.
	if _, err := ReadLog(bomb, false, lim, native); fleet.ErrorCode(err) != fleet.EUNPROCESSABLE {
		t.Fatalf("ReadLog: %v", err)
	}
}

// The row limit counts the decompressed rows.
func TestGzipRowLimit(t *testing.T) {
	var b strings.Builder
	b.WriteString("t_s,pack_v,pack_a\n")
	for i := range 20 {
		fmt.Fprintf(&b, "%d,16.8,1\n", i)
	}
	_, err := ReadLog(gz(t, []byte(b.String())), true, telemetry.Limits{MaxRows: 10}, native)
	var fe *fleet.Error
	if !errors.As(err, &fe) || fe.Line != 12 || !strings.Contains(fe.Message, "10 data rows") {
		t.Fatalf("err %v, want the row limit at line 12", err)
	}
}

// A gzip upload reads as its text would: same hash, same size, same log.
func TestGzipReadsAsText(t *testing.T) {
	text := []byte("t_s,pack_v,pack_a\n0,16.8,1\n1,16.7,2\n")
	plain, err := ReadLog(text, false, telemetry.Limits{}, native)
	if err != nil {
		t.Fatal(err)
	}
	// Two members, as a tool appending to a .gz file writes them.
	two := append(gz(t, text[:20]), gz(t, text[20:])...)
	comp, err := ReadLog(two, true, telemetry.Limits{}, native)
	if err != nil {
		t.Fatal(err)
	}
	if plain.Gzip || !comp.Gzip || comp.SHA256 != plain.SHA256 || comp.Bytes != int64(len(text)) || comp.Log.Rows != 2 {
		t.Fatalf("plain %+v, gzip %+v", plain, comp)
	}
	back, err := Decompress(two)
	if err != nil || !bytes.Equal(back, text) {
		t.Fatalf("Decompress: %q %v", back, err)
	}
	// Declared gzip but not; and a damaged stream (checksum).
	for name, raw := range map[string][]byte{"not gzip": text, "damaged": func() []byte {
		b := gz(t, text)
		b[len(b)-6] ^= 0xff // in the CRC-32 of the trailer
		return b
	}()} {
		_, err := ReadLog(raw, true, telemetry.Limits{}, native)
		var fe *fleet.Error
		if !errors.As(err, &fe) || fe.Code != fleet.EUNPROCESSABLE || fe.Field != "log" {
			t.Errorf("%s: %v, want a refusal of the log", name, err)
		}
	}
}
