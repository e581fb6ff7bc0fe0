package ingest

import (
	"bytes"
	"compress/gzip"
	"errors"
	"io"
	"sync"
	"sync/atomic"

	kgzip "github.com/klauspost/compress/gzip"
)

// Stored logs are gzip (RFC 1952), written with klauspost/compress's
// encoder: the same format the standard library reads. At upload a log the
// service compresses itself is packed fast, Huffman coding only (about a
// third of the CPU of the encoder's fastest level with matching, on a
// 90,000-row log, for output about a quarter larger: BenchmarkStoredCodec),
// and marked for the repack job, which rewrites it at repackLevel later, off
// the upload's path, smaller than the fastest level would have made it.
// zstd (klauspost/compress/zstd) was measured too and left: more CPU than
// gzip at its fastest level for 4 % smaller output, and a second stored
// format for the download route and the records bundles to carry.

// repackLevel is the level the repack job writes: about 0.33 of the text on
// the benchmark log, against 0.37 at the fastest level and 0.45 packed fast.
const repackLevel = 6

// gzipWriters are reused: each holds its encoder's tables. fastWriters pack
// at upload; repackWriters for the repack job.
var (
	fastWriters = sync.Pool{New: func() any {
		w, _ := kgzip.NewWriterLevel(nil, kgzip.HuffmanOnly)
		return w
	}}
	repackWriters = sync.Pool{New: func() any {
		w, _ := kgzip.NewWriterLevel(nil, repackLevel)
		return w
	}}
)

// errStopped ends a compression whose upload was refused or already known.
var errStopped = errors.New("ingest: compression stopped")

// packing is a log being compressed for storage beside the parse.
type packing struct {
	stopped atomic.Bool
	done    chan struct{}
	out     []byte
	err     error
}

func startCompress(b []byte) *packing {
	p := &packing{done: make(chan struct{})}
	go func() {
		defer close(p.done)
		p.out, p.err = compress(b, &p.stopped)
	}()
	return p
}

// wait returns the compressed log.
func (p *packing) wait() ([]byte, error) {
	<-p.done
	return p.out, p.err
}

// stop asks the compression to end at its next chunk (harmless once done).
func (p *packing) stop() { p.stopped.Store(true) }

// compress packs b fast for storage (Huffman coding only), one chunk at a
// time so that stop ends it early; the output buffer is sized once, for
// text that halves (logs pack fast to about 45 %).
func compress(b []byte, stop *atomic.Bool) ([]byte, error) {
	return gzipWith(&fastWriters, b, stop)
}

func gzipWith(pool *sync.Pool, b []byte, stop *atomic.Bool) ([]byte, error) {
	const chunk = 1 << 20
	buf := bytes.NewBuffer(make([]byte, 0, len(b)/2+64))
	w := pool.Get().(*kgzip.Writer)
	defer pool.Put(w)
	w.Reset(buf)
	for len(b) > 0 {
		if stop != nil && stop.Load() {
			return nil, errStopped
		}
		n := min(len(b), chunk)
		if _, err := w.Write(b[:n]); err != nil {
			return nil, err
		}
		b = b[n:]
	}
	if err := w.Close(); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// Decompress returns a stored log's text (a stored gzip upload may hold
// several gzip members; all are read).
func Decompress(gz []byte) ([]byte, error) {
	r, err := gzip.NewReader(bytes.NewReader(gz))
	if err != nil {
		return nil, err
	}
	defer r.Close()
	return io.ReadAll(r)
}
