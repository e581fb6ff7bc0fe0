// Package logging builds the process's logger: slog's text or JSON handler
// writing to a Writer that batches lines, so a busy server makes one write
// to its standard error per batch, not one per access line.
package logging

import (
	"context"
	"io"
	"log/slog"
	"time"

	"go.uber.org/zap/zapcore"
)

// Batching bounds: what waits in memory, and for how long at most. An
// operator tailing the log sees an info line within FlushEvery; warnings
// and errors are written at once (New).
const (
	BatchBytes = 64 << 10
	FlushEvery = 200 * time.Millisecond
)

// Writer batches whole writes (slog writes one line per call) to w: they
// are written together when BatchBytes are waiting, every FlushEvery, on
// Flush and on Stop. A write never straddles two batches, so lines stay
// whole when others also write to w. zapcore.BufferedWriteSyncer does the
// batching; w's own Sync (an fsync when standard error is a file) is never
// called.
type Writer struct {
	ws *zapcore.BufferedWriteSyncer
}

// NewWriter batches writes to w, flushing at least every interval.
func NewWriter(w io.Writer, interval time.Duration) *Writer {
	return &Writer{ws: &zapcore.BufferedWriteSyncer{WS: zapcore.AddSync(plain{w}), Size: BatchBytes,
		FlushInterval: interval}}
}

// plain hides a writer's Sync method from zapcore.AddSync.
type plain struct{ io.Writer }

func (w *Writer) Write(p []byte) (int, error) { return w.ws.Write(p) }

// Flush writes what is waiting.
func (w *Writer) Flush() error { return w.ws.Sync() }

// Stop writes what is waiting and stops the flushing clock; call it before
// the process exits.
func (w *Writer) Stop() error { return w.ws.Stop() }

// New returns a logger in format ("text": logfmt-style key=value, or
// "json") at level, writing to w. When w is a Writer, records at warning
// level and above are flushed as soon as they are written, so a database
// lost or a failed job is never held back behind a batch.
func New(w io.Writer, level slog.Leveler, format string) *slog.Logger {
	opts := &slog.HandlerOptions{Level: level}
	var h slog.Handler
	if format == "json" {
		h = slog.NewJSONHandler(w, opts)
	} else {
		h = slog.NewTextHandler(w, opts)
	}
	if bw, ok := w.(*Writer); ok {
		h = flushing{Handler: h, w: bw}
	}
	return slog.New(h)
}

// flushing flushes its Writer after each record at warning level or above.
type flushing struct {
	slog.Handler
	w *Writer
}

func (h flushing) Handle(ctx context.Context, r slog.Record) error {
	err := h.Handler.Handle(ctx, r)
	if r.Level >= slog.LevelWarn {
		_ = h.w.Flush() // the line is written or the writer keeps its error for the next
	}
	return err
}

func (h flushing) WithAttrs(as []slog.Attr) slog.Handler {
	return flushing{Handler: h.Handler.WithAttrs(as), w: h.w}
}

func (h flushing) WithGroup(name string) slog.Handler {
	return flushing{Handler: h.Handler.WithGroup(name), w: h.w}
}
