package api

import (
	"bytes"
	"errors"
	"io"
	"testing"
	"testing/iotest"
)

// readSized reads every byte whatever the size hint (none, exact, too
// small, too large), in one buffer of the hinted size when the hint holds.
func TestReadSized(t *testing.T) {
	data := bytes.Repeat([]byte("0.02,25.1,3.4\n"), 50_000)
	n := int64(len(data))
	for _, hint := range []int64{-1, 0, 10, n - 1, n, n + 300, 1 << 40} {
		got, err := readSized(iotest.HalfReader(bytes.NewReader(data)), hint, 64<<20)
		if err != nil || !bytes.Equal(got, data) {
			t.Fatalf("hint %d: %d bytes, %v", hint, len(got), err)
		}
		if hint >= n && hint <= n+300 && int64(cap(got)) != hint {
			t.Fatalf("hint %d: buffer grew to %d", hint, cap(got))
		}
	}
	boom := errors.New("boom")
	if _, err := readSized(io.MultiReader(bytes.NewReader(data[:100]), iotest.ErrReader(boom)), n, 64<<20); !errors.Is(err, boom) {
		t.Fatalf("a failing reader: %v", err)
	}
}
