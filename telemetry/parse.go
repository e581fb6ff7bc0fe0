package telemetry

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"
	"unsafe"

	"github.com/rotorwright/rotorwright/fleet"
)

// Default limits, matching the service's upload limits (64 MiB, 2 million rows).
const (
	DefaultMaxRows  = 2_000_000
	DefaultMaxBytes = 64 << 20
)

// maxMagnitude bounds every value so that products and integrals of a log stay
// finite; no real log comes near it.
const maxMagnitude = 1e12

// Limits bound what Parse accepts. A zero field takes its default.
type Limits struct {
	MaxRows  int   // data rows
	MaxBytes int64 // bytes of input, comments and header included
}

func (l Limits) withDefaults() Limits {
	if l.MaxRows <= 0 {
		l.MaxRows = DefaultMaxRows
	}
	if l.MaxBytes <= 0 {
		l.MaxBytes = DefaultMaxBytes
	}
	return l
}

// column is how one header column is read.
type column struct {
	name   string     // as the header gives it
	target string     // the service column it feeds; "" ignored
	dst    *[]float64 // nil: ignored
	// vals holds the column's values while parsing, at their row's index,
	// every bound column's of the same length (parser.capRows); finish hands
	// them to dst. Storing a float by index, not appending through dst,
	// spares a slice-header store (with its write barrier) per value.
	vals   []float64
	lo, hi float64 // accepted range, inclusive
	loOpen bool    // lo itself is refused
	opt    bool    // optional: a blank cell is no reading (NaN), not a refusal
	blank  int     // blank cells seen
}

type parser struct {
	lim    Limits
	br     *bufio.Reader
	long   []byte
	line   int
	nbytes int64
	log    *Log
	cols   []column
	header int // line of the header, 0 before it
	tcol   int
	lat    int // index of the lat column, -1 if none (lon then also none)
	lon    int
	prevT  float64
	seen   map[string]bool
	hint   int // input length when the reader tells it, to size the series once
	// capRows is the length of every bound column's vals.
	capRows int
	// mem: the log is src, in memory, read in place (br unused).
	mem bool
	src []byte
}

// Parse reads a flight log (format in the package documentation). It streams
// the input and refuses a bad file with a *fleet.Error (code EUNPROCESSABLE)
// naming the physical line and the column at fault. Errors from r itself are
// returned wrapped, as they are.
func Parse(r io.Reader, lim Limits) (*Log, error) {
	return newParser(r, lim).parse()
}

// ParseBytes is Parse of a log held in memory: its lines are read in place
// rather than copied through a reader's buffer.
func ParseBytes(b []byte, lim Limits) (*Log, error) {
	return newBytesParser(b, lim).parse()
}

func (p *parser) parse() (*Log, error) {
	for {
		b, ok, err := p.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		if p.line == 1 {
			b = bytes.TrimPrefix(b, []byte("\xEF\xBB\xBF"))
		}
		if len(bytes.TrimSpace(b)) == 0 {
			continue
		}
		if b[0] == '#' {
			if p.header == 0 {
				if err := p.meta(b[1:]); err != nil {
					return nil, err
				}
			}
			continue
		}
		if p.header == 0 {
			if err := p.parseHeader(b); err != nil {
				return nil, err
			}
			continue
		}
		if err := p.row(b); err != nil {
			return nil, err
		}
	}
	if p.header == 0 {
		return nil, p.refuse(max(p.line, 1), "", "the log has no header row")
	}
	if p.log.Rows == 0 {
		return nil, p.refuse(p.line, "", "the log has no data rows")
	}
	p.finish()
	return p.log, nil
}

// newParser reads r under the limits; the byte limit holds before any
// buffering, so a decompressing reader is never drained past it.
func newParser(r io.Reader, lim Limits) *parser {
	lim = lim.withDefaults()
	p := &parser{
		lim:  lim,
		br:   bufio.NewReaderSize(io.LimitReader(r, lim.MaxBytes+1), 64<<10),
		log:  &Log{},
		seen: map[string]bool{},
	}
	if lr, ok := r.(interface{ Len() int }); ok {
		p.hint = lr.Len()
	}
	return p
}

// newBytesParser reads b in place.
func newBytesParser(b []byte, lim Limits) *parser {
	p := &parser{lim: lim.withDefaults(), log: &Log{}, seen: map[string]bool{}, mem: true, src: b, hint: len(b)}
	return p
}

// next returns the next physical line without its line ending.
func (p *parser) next() ([]byte, bool, error) {
	if p.mem {
		return p.nextInPlace()
	}
	b, err := p.br.ReadSlice('\n')
	if errors.Is(err, bufio.ErrBufferFull) {
		p.long = append(p.long[:0], b...)
		for errors.Is(err, bufio.ErrBufferFull) {
			b, err = p.br.ReadSlice('\n')
			p.long = append(p.long, b...)
		}
		b = p.long
	}
	if err != nil && err != io.EOF {
		return nil, false, fmt.Errorf("telemetry: reading log: %w", err)
	}
	if len(b) == 0 {
		return nil, false, nil
	}
	p.line++
	p.nbytes += int64(len(b))
	if p.nbytes > p.lim.MaxBytes {
		return nil, false, p.refuse(p.line, "", fmt.Sprintf("the log is larger than the limit of %d bytes", p.lim.MaxBytes))
	}
	b = bytes.TrimSuffix(b, []byte{'\n'})
	b = bytes.TrimSuffix(b, []byte{'\r'})
	return b, true, nil
}

// nextInPlace is next for a log in memory: the line is sliced from it.
func (p *parser) nextInPlace() ([]byte, bool, error) {
	if len(p.src) == 0 {
		return nil, false, nil
	}
	b := p.src
	if i := bytes.IndexByte(b, '\n'); i >= 0 {
		b, p.src = b[:i+1], b[i+1:]
	} else {
		p.src = nil
	}
	p.line++
	p.nbytes += int64(len(b))
	if p.nbytes > p.lim.MaxBytes {
		return nil, false, p.refuse(p.line, "", fmt.Sprintf("the log is larger than the limit of %d bytes", p.lim.MaxBytes))
	}
	b = bytes.TrimSuffix(b, []byte{'\n'})
	b = bytes.TrimSuffix(b, []byte{'\r'})
	return b, true, nil
}

func (p *parser) refuse(line int, col, msg string) *fleet.Error {
	field := fmt.Sprintf("line %d", line)
	if col != "" {
		field += ", column " + col
	}
	return &fleet.Error{Code: fleet.EUNPROCESSABLE, Message: msg, Field: field, Line: line, Column: col}
}

// meta reads a comment before the header; only `key: value` forms are metadata.
func (p *parser) meta(b []byte) error {
	if !utf8.Valid(b) || bytes.IndexByte(b, 0) >= 0 {
		return p.refuse(p.line, "", "comment is not valid UTF-8 or holds a NUL byte")
	}
	s := strings.TrimSpace(string(b))
	k, v, ok := strings.Cut(s, ":")
	k = strings.ToLower(strings.TrimSpace(k))
	if !ok || k == "" || strings.ContainsAny(k, " \t") {
		return nil
	}
	v = strings.TrimSpace(v)
	if p.seen["#"+k] {
		return p.refuse(p.line, "", fmt.Sprintf("metadata key %q given twice", k))
	}
	p.seen["#"+k] = true
	m := &p.log.Meta
	switch k {
	case "start":
		t, err := time.Parse(time.RFC3339Nano, v)
		if err != nil {
			return p.refuse(p.line, "", fmt.Sprintf("metadata start %q is not an RFC 3339 time", v))
		}
		m.Start = &t
	case "airframe":
		m.Airframe = v
	case "packs":
		for s := range strings.SplitSeq(v, ",") {
			if s = strings.TrimSpace(s); s != "" {
				m.Packs = append(m.Packs, s)
			}
		}
	default:
		if m.Other == nil {
			m.Other = map[string]string{}
		}
		m.Other[k] = v
	}
	return nil
}

func (p *parser) parseHeader(b []byte) error {
	p.header = p.line
	if !utf8.Valid(b) || bytes.IndexByte(b, 0) >= 0 {
		return p.refuse(p.line, "", "header is not valid UTF-8 or holds a NUL byte")
	}
	names := strings.Split(string(b), ",")
	l := p.log
	p.cols = make([]column, len(names))
	unknown := map[string]bool{}
	for i, n := range names {
		n = strings.TrimSpace(n)
		if n == "" {
			return p.refuse(p.line, "", fmt.Sprintf("column %d of the header has no name", i+1))
		}
		p.cols[i] = column{name: n}
		if !fleet.LogColumn(n) {
			if !unknown[n] {
				unknown[n] = true
				l.Unknown = append(l.Unknown, n)
			}
			continue
		}
		if p.seen[n] {
			return p.refuse(p.line, n, fmt.Sprintf("column %s appears twice", n))
		}
		p.seen[n] = true
		p.cols[i].target = n
		l.Columns = append(l.Columns, n)
	}
	if col, why := fleet.MissingLogColumn(p.seen); col != "" {
		return p.refuse(p.line, col, why)
	}
	p.bindAll()
	return nil
}

// bindAll binds the columns to the log's series and notes where time, lat
// and lon are.
func (p *parser) bindAll() {
	p.tcol = p.log.bind(p.cols)
	p.lat, p.lon = -1, -1
	for i, c := range p.cols {
		switch c.target {
		case "lat":
			p.lat = i
		case "lon":
			p.lon = i
		}
	}
}

// row parses one data row, appending a value to every recognised series.
func (p *parser) row(b []byte) error {
	l := p.log
	if l.Rows >= p.lim.MaxRows {
		return p.refuse(p.line, "", fmt.Sprintf("the log has more than the limit of %d data rows", p.lim.MaxRows))
	}
	r := l.Rows
	if r == p.capRows {
		p.growAll(max(2*r, 1024))
	}
	n := len(p.cols)
	pos := 0
	for k := range n {
		end, v, ok := cutFieldAt(b, pos)
		more := end < len(b)
		if k < n-1 && !more {
			return p.refuse(p.line, p.cols[k+1].name,
				fmt.Sprintf("row has %d fields, the header has %d", k+1, n))
		}
		if k == n-1 && more {
			return p.refuse(p.line, p.cols[k].name,
				fmt.Sprintf("row has %d fields, the header has %d", n+1+bytes.Count(b[end+1:], []byte{','}), n))
		}
		f := b[pos:end]
		pos = end + 1
		c := &p.cols[k]
		if c.dst == nil {
			continue
		}
		// check's test inline for the common value; a value that fails it
		// goes through check itself for the refusal.
		if ok && v >= c.lo && v <= c.hi && (v != c.lo || !c.loOpen) && v <= maxMagnitude && v >= -maxMagnitude {
			c.vals[r] = v
			continue
		}
		var err error
		if ok {
			v, err = p.check(c, v)
		} else {
			v, err = p.value(c, f)
		}
		if err != nil {
			return err
		}
		c.vals[r] = v
	}
	if k := p.halfFix(); k >= 0 {
		return p.refuse(p.line, p.cols[k].name, halfFixText)
	}
	t := p.cols[p.tcol].vals[r]
	if l.Rows > 0 && !(t > p.prevT) {
		return p.refuse(p.line, "t_s", fmt.Sprintf("time %g s is not after the previous row's %g s", t, p.prevT))
	}
	p.prevT = t
	l.Rows++
	if l.Rows == 1 && p.hint > 0 {
		p.reserve(len(b) + 1)
	}
	return nil
}

// reserve sizes every series for the rows the rest of the input can hold at
// the first row's length, sparing the copies of repeated growth.
func (p *parser) reserve(rowLen int) {
	est := min((p.hint-int(p.nbytes))/rowLen*11/10+16, p.lim.MaxRows)
	if est > p.capRows {
		p.growAll(est)
	}
}

// growAll gives every bound column room for rows values, keeping those read.
func (p *parser) growAll(rows int) {
	for i := range p.cols {
		c := &p.cols[i]
		if c.dst != nil {
			v := make([]float64, rows)
			copy(v, c.vals[:p.log.Rows])
			c.vals = v
		}
	}
	p.capRows = rows
}

func (p *parser) value(c *column, f []byte) (float64, error) {
	f = trimSpace(f)
	if len(f) == 0 {
		if c.opt {
			c.blank++
			return math.NaN(), nil
		}
		return 0, p.refuse(p.line, c.name, "empty value in required column "+c.name+" (only optional columns may be left blank)")
	}
	v, ok := parseDecimal(f)
	if ok {
		return p.check(c, v)
	}
	// The string aliases the read buffer only for the call; ParseFloat does not keep
	// it on success, and on error the message copies it before the buffer moves on.
	v, err := strconv.ParseFloat(unsafe.String(unsafe.SliceData(f), len(f)), 64)
	if err != nil {
		var ne *strconv.NumError
		if errors.As(err, &ne) && errors.Is(ne.Err, strconv.ErrRange) {
			return 0, p.refuse(p.line, c.name, fmt.Sprintf("value %.40q in column %s is out of range", f, c.name))
		}
		return 0, p.refuse(p.line, c.name, fmt.Sprintf("value %.40q in column %s is not a number", f, c.name))
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, p.refuse(p.line, c.name, fmt.Sprintf("value %.40q in column %s is NaN or infinite", f, c.name))
	}
	return p.check(c, v)
}

// check applies the magnitude bound and the column's range.
func (p *parser) check(c *column, v float64) (float64, error) {
	if math.Abs(v) > maxMagnitude {
		return 0, p.refuse(p.line, c.name, fmt.Sprintf("value %g in column %s is beyond %g, taken as corrupt", v, c.name, maxMagnitude))
	}
	if v < c.lo || v > c.hi || (c.loOpen && v == c.lo) {
		return 0, p.refuse(p.line, c.name, fmt.Sprintf("value %g in column %s is outside %s", v, c.name, rangeText(c)))
	}
	return v, nil
}

func rangeText(c *column) string {
	switch {
	case math.IsInf(c.hi, 1) && c.loOpen:
		return fmt.Sprintf("the accepted range (above %g)", c.lo)
	case math.IsInf(c.hi, 1):
		return fmt.Sprintf("the accepted range (%g or more)", c.lo)
	}
	return fmt.Sprintf("the accepted range %g..%g", c.lo, c.hi)
}

func trimSpace(f []byte) []byte {
	for len(f) > 0 && (f[0] == ' ' || f[0] == '\t') {
		f = f[1:]
	}
	for len(f) > 0 && (f[len(f)-1] == ' ' || f[len(f)-1] == '\t') {
		f = f[:len(f)-1]
	}
	return f
}
