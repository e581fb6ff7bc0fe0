package ingest

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"strings"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/telemetry"
)

// Reading is a log read as the service reads it.
type Reading struct {
	Log *telemetry.Log
	Map *fleet.ColumnMap // nil: the native layout
	// SHA256 and Bytes are of the log's text (after gzip is undone), so the
	// same log uploaded plain or compressed is the same log.
	SHA256 string
	Bytes  int64
	Gzip   bool // the upload was gzip-compressed
}

// Picker chooses the column map for a log from its first bytes (up to
// telemetry.DetectBytes of its text); nil is the native layout.
type Picker func(head []byte) (*fleet.ColumnMap, error)

// gzipMagic starts every gzip member (RFC 1952 section 2.3.1).
var gzipMagic = []byte{0x1f, 0x8b}

// ReadLog reads an uploaded log: gzip-compressed when gz says so or when it
// starts with gzip's magic bytes (no CSV text does), decompressed as it is
// parsed so the row and byte limits apply to the text and a small upload
// that inflates past them is refused without inflating the rest; then read
// through the map pick chooses. A plain log is hashed beside its parse, on
// another core, rather than before it.
func ReadLog(raw []byte, gz bool, lim telemetry.Limits, pick Picker) (*Reading, error) {
	gz = gz || bytes.HasPrefix(raw, gzipMagic)
	if !gz {
		m, err := pick(raw[:min(len(raw), telemetry.DetectBytes)])
		if err != nil {
			return nil, err
		}
		hashed := make(chan [sha256.Size]byte, 1)
		go func() { hashed <- sha256.Sum256(raw) }()
		l, err := telemetry.ParseMappedBytes(raw, m, lim)
		sum := <-hashed
		if err != nil {
			return nil, err
		}
		return &Reading{Log: l, Map: m, SHA256: hex.EncodeToString(sum[:]), Bytes: int64(len(raw))}, nil
	}
	return readGzip(bytes.NewReader(raw), lim, pick)
}

// readGzip reads a gzip-compressed log from src, inflating only what the
// parser asks for.
func readGzip(src io.Reader, lim telemetry.Limits, pick Picker) (*Reading, error) {
	zr, err := gzip.NewReader(src)
	if err != nil {
		return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "log",
			Message: "the log is sent as gzip-compressed (Content-Encoding: gzip or a .gz name) but is not gzip data"}
	}
	h := sha256.New()
	text := &gzipText{r: io.TeeReader(zr, h)}
	br := bufio.NewReaderSize(text, telemetry.DetectBytes)
	head, err := br.Peek(telemetry.DetectBytes)
	if err != nil && !errors.Is(err, io.EOF) && !errors.Is(err, bufio.ErrBufferFull) {
		return nil, err
	}
	m, err := pick(head)
	if err != nil {
		return nil, err
	}
	l, err := telemetry.ParseMapped(br, m, lim)
	if err != nil {
		return nil, err
	}
	return &Reading{Log: l, Map: m, SHA256: hex.EncodeToString(h.Sum(nil)), Bytes: text.n, Gzip: true}, nil
}

// gzipText counts the decompressed bytes and turns a damaged stream into a
// refusal of the log.
type gzipText struct {
	r io.Reader
	n int64
}

func (g *gzipText) Read(p []byte) (int, error) {
	n, err := g.r.Read(p)
	g.n += int64(n)
	if err != nil && err != io.EOF {
		return n, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "log",
			Message: fmt.Sprintf("the gzip-compressed log is damaged after %d bytes of text: %v", g.n, err)}
	}
	return n, err
}

// Picker returns the map chooser for an upload: the map named by ref (a
// name or an id; "native" for the service's own layout), else the one map
// whose detect names the log's header holds, else the native layout.
func (in *Ingester) Picker(ctx context.Context, ref string) Picker {
	return func(head []byte) (*fleet.ColumnMap, error) {
		switch {
		case strings.EqualFold(ref, fleet.NativeLayout):
			return nil, nil
		case ref != "":
			m, err := in.DB.ColumnMapByRef(ctx, ref)
			if fleet.ErrorCode(err) == fleet.ENOTFOUND {
				return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "column_map",
					Message: fmt.Sprintf("no column map has the name or id %q", ref)}
			}
			return m, err
		}
		maps, err := in.DB.ColumnMaps(ctx)
		if err != nil {
			return nil, err
		}
		return Pick(head, maps)
	}
}

// Pick is auto-detection over maps: the one map that matches, none (the
// native layout), or a refusal when several do.
func Pick(head []byte, maps []*fleet.ColumnMap) (*fleet.ColumnMap, error) {
	got := telemetry.Detect(head, maps)
	switch len(got) {
	case 0:
		return nil, nil
	case 1:
		return got[0], nil
	}
	names := make([]string, len(got))
	for i, m := range got {
		names[i] = fmt.Sprintf("%q", m.Name)
	}
	return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "column_map",
		Message: "the log's header matches the column maps " + strings.Join(names, " and ") + "; name one in column_map"}
}
