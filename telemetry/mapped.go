package telemetry

import (
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

// noPow marks a scale that is not a power of ten.
const noPow = math.MinInt

// conversion turns one source column's values into its target's unit.
type conversion struct {
	scale, offset float64
	pow           int // scale is 10^pow, applied exactly by moving the decimal point
	neg           bool
}

func newConversion(s fleet.MapSource) conversion {
	c := conversion{scale: 1, offset: s.Offset, neg: s.Negate, pow: noPow}
	if s.Scale != nil {
		c.scale = *s.Scale
	}
	for k := range len(pow10) {
		// 1/pow10[k] is the double nearest 10^-k, as a map's "0.001" decodes.
		switch c.scale {
		case pow10[k]:
			c.pow = k
		case 1 / pow10[k]:
			c.pow = -k
		}
	}
	return c
}

// apply returns (mant / 10^frac) * scale. With a power-of-ten scale the
// decimal point moves and one IEEE operation rounds the exact result, so
// "12345" mV at scale 0.001 gives the same double as "12.345" V.
func (c *conversion) apply(mant uint64, frac int) float64 {
	if c.pow != noPow {
		if e := frac - c.pow; e >= 0 && e < len(pow10) {
			return float64(mant) / pow10[e]
		} else if e < 0 && -e < len(pow10) {
			return float64(mant) * pow10[-e]
		}
	}
	return float64(mant) / pow10[frac] * c.scale
}

// mapParser reads a log through a column map; it shares the native parser's
// line reading, limits and refusals.
type mapParser struct {
	*parser
	m     *fleet.ColumnMap
	sp    splitter
	conv  []conversion // per header column
	unit  int          // time unit as a power of ten of nanoseconds
	rec   []byte       // a record spanning lines
	cur   []byte       // the current record when it holds quotes
	line0 int          // first line of the current record
	multi bool         // the current record went through splitQuoted
	t0ns  int64
	t0    time.Time
	tbuf  []byte
	// The minute of the last RFC 3339 time parsed in full: its text up to
	// the seconds, its zone, and its time at second zero.
	tmin, tzone []byte
	tbase       time.Time
}

// ParseMapped reads a log laid out as the column map m describes (m has
// passed Validate): the header on m.HeaderRow (lines before it skipped),
// RFC 4180 fields split at m.Delimiter, a UTF-8 byte-order mark and blank
// lines ignored, the time column read in its unit and origin, and every
// mapped source converted to its target. Unmapped columns are ignored and
// reported in Log.Unknown. Refusals are those of Parse, each naming the
// line and the source column with its target. With m nil it is Parse.
func ParseMapped(r io.Reader, m *fleet.ColumnMap, lim Limits) (*Log, error) {
	if m == nil {
		return Parse(r, lim)
	}
	return parseMapped(newParser(r, lim), m)
}

// ParseMappedBytes is ParseMapped of a log held in memory, read in place.
func ParseMappedBytes(b []byte, m *fleet.ColumnMap, lim Limits) (*Log, error) {
	if m == nil {
		return ParseBytes(b, lim)
	}
	return parseMapped(newBytesParser(b, lim), m)
}

func parseMapped(base *parser, m *fleet.ColumnMap) (*Log, error) {
	p := &mapParser{parser: base, m: m, sp: splitter{delim: m.Delimiter[0]}}
	switch m.Time.Unit {
	case "s":
		p.unit = 9
	case "ms":
		p.unit = 6
	case "us":
		p.unit = 3
	}
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
		if p.header == 0 && p.line < m.HeaderRow {
			continue
		}
		if p.header == 0 {
			rec, err := p.record(b)
			if err != nil {
				return nil, err
			}
			if err := p.parseHeader(rec); err != nil {
				return nil, err
			}
			continue
		}
		if p.blankLine(b) {
			continue
		}
		rec, err := p.record(b)
		if err != nil {
			return nil, err
		}
		if err := p.row(rec); err != nil {
			return nil, err
		}
	}
	if p.header == 0 {
		return nil, p.refuse(max(p.line, 1), "", fmt.Sprintf("the log has no header row (map %s expects it on line %d)", m.Name, m.HeaderRow))
	}
	if p.log.Rows == 0 {
		return nil, p.refuse(p.line, "", "the log has no data rows")
	}
	p.finish()
	return p.log, nil
}

func (p *mapParser) blankLine(b []byte) bool {
	for _, c := range b {
		if !p.sp.blank(c) {
			return false
		}
	}
	return true
}

// record returns the record starting with line b: b itself when it holds no
// quote, else the lines up to the one that closes the last quoted field.
func (p *mapParser) record(b []byte) ([]byte, error) {
	p.line0 = p.line
	q := bytes.Count(b, []byte{'"'})
	if p.multi = q > 0; !p.multi {
		return b, nil
	}
	if p.cur = b; q%2 == 0 {
		return b, nil
	}
	p.rec = append(p.rec[:0], b...)
	for open := true; open; {
		nb, ok, err := p.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			return nil, p.unclosed(fmt.Sprintf("a quoted field opened on line %d is not closed by the end of the log", p.line0))
		}
		p.rec = append(append(p.rec, '\n'), nb...)
		if len(p.rec) > maxRecordBytes {
			return nil, p.unclosed(fmt.Sprintf("the record from line %d runs over %d bytes: a quote is not closed", p.line0, maxRecordBytes))
		}
		open = quotesOpen(nb, open)
	}
	p.cur = p.rec
	return p.rec, nil
}

// unclosed refuses a record whose quotes never balance, at the first
// malformed field when there is one (a stray quote unbalances them too).
func (p *mapParser) unclosed(msg string) *fleet.Error {
	if _, at, why := p.sp.splitQuoted(p.rec); why != "" && why != whyUnclosed {
		return p.refuse(p.line0+bytes.Count(p.rec[:at], []byte{'\n'}), "", why)
	}
	return p.refuse(p.line0, "", msg)
}

// fields splits the current record; a malformed one is refused at the line
// of the fault.
func (p *mapParser) fields(rec []byte) ([][]byte, error) {
	if !p.multi {
		return p.sp.split(rec), nil
	}
	fs, at, why := p.sp.splitQuoted(rec)
	if why != "" {
		return nil, p.refuse(p.line0+bytes.Count(rec[:at], []byte{'\n'}), "", why)
	}
	return fs, nil
}

// lineOf is the physical line of field k of the current record. Only a
// record spanning lines needs the work: split it again noting where each
// field starts (a refusal ends the reading, so the fields may be reused).
func (p *mapParser) lineOf(k int) int {
	if !p.multi || bytes.IndexByte(p.cur, '\n') < 0 {
		return p.line0
	}
	p.sp.withOffs = true
	p.sp.splitQuoted(p.cur)
	if k >= len(p.sp.offs) {
		return p.line0
	}
	return p.line0 + bytes.Count(p.cur[:p.sp.offs[k]], []byte{'\n'})
}

// refuseCol refuses at field k of the current record, naming the source
// column and, when mapped, its target.
func (p *mapParser) refuseCol(k int, msg string) *fleet.Error {
	c := p.cols[k]
	e := p.refuse(p.lineOf(k), c.name, msg)
	if c.target != "" {
		e.Field += " (maps to " + c.target + ")"
	}
	return e
}

func (p *mapParser) parseHeader(rec []byte) error {
	p.header = p.line0
	if !utf8.Valid(rec) {
		return p.refuse(p.line0, "", "header is not valid UTF-8")
	}
	fs, err := p.fields(rec)
	if err != nil {
		return err
	}
	bySource := map[string]string{p.m.Time.Column: fleet.ColTime}
	for t, s := range p.m.Columns {
		bySource[s.From] = t
	}
	l := p.log
	p.cols = make([]column, len(fs))
	p.conv = make([]conversion, len(fs))
	present := map[string]bool{}
	unknown := map[string]bool{}
	for i, f := range fs {
		n := strings.TrimSpace(string(f))
		p.cols[i].name = n
		t, ok := bySource[n]
		if !ok {
			if n != "" && !unknown[n] {
				unknown[n] = true
				l.Unknown = append(l.Unknown, n)
			}
			continue
		}
		if present[t] {
			return p.refuse(p.lineOf(i), n, fmt.Sprintf("column %s appears twice in the header", n))
		}
		present[t] = true
		p.cols[i].target = t
		if t != fleet.ColTime {
			p.conv[i] = newConversion(p.m.Columns[t])
		}
		l.Columns = append(l.Columns, t)
	}
	if col, why := fleet.MissingLogColumn(present); col != "" {
		src := p.m.Time.Column
		if col != fleet.ColTime {
			src = p.m.Columns[col].From
		}
		e := p.refuse(p.line0, src, fmt.Sprintf("the header has no column %q (%s)", src, why))
		e.Field += " (maps to " + col + ")"
		return e
	}
	p.bindAll()
	return nil
}

// row reads one data record.
func (p *mapParser) row(rec []byte) error {
	l := p.log
	if l.Rows >= p.lim.MaxRows {
		return p.refuse(p.line0, "", fmt.Sprintf("the log has more than the limit of %d data rows", p.lim.MaxRows))
	}
	fs, err := p.fields(rec)
	if err != nil {
		return err
	}
	if n := len(p.cols); len(fs) != n {
		return p.refuseCol(min(len(fs), n-1), fmt.Sprintf("row has %d fields, the header has %d", len(fs), n))
	}
	r := l.Rows
	if r == p.capRows {
		p.growAll(max(2*r, 1024))
	}
	for k := range p.cols {
		c := &p.cols[k]
		if c.dst == nil {
			continue
		}
		var v float64
		if k == p.tcol {
			v, err = p.time(k, fs[k])
		} else {
			v, err = p.value(k, fs[k])
		}
		if err != nil {
			return err
		}
		c.vals[r] = v
	}
	if k := p.halfFix(); k >= 0 {
		return p.refuseCol(k, halfFixText)
	}
	t := p.cols[p.tcol].vals[r]
	if l.Rows > 0 && !(t > p.prevT) {
		return p.refuseCol(p.tcol, fmt.Sprintf("time %.40q (t_s %g) is not after the previous row's (t_s %g)", trimSpace(fs[p.tcol]), t, p.prevT))
	}
	p.prevT = t
	l.Rows++
	if l.Rows == 1 && p.hint > 0 {
		p.reserve(len(rec) + 1)
	}
	return nil
}

// value reads field f of source column k and converts it to the target.
func (p *mapParser) value(k int, f []byte) (float64, error) {
	f = trimSpace(f)
	if len(f) == 0 {
		if c := &p.cols[k]; c.opt {
			c.blank++
			return math.NaN(), nil
		}
		return 0, p.refuseCol(k, "empty value in a required column (only optional columns may be left blank)")
	}
	cv := &p.conv[k]
	var v float64
	if mant, frac, neg, ok := decimalParts(f); ok {
		v = cv.apply(mant, frac)
		if neg != cv.neg {
			v = -v
		}
	} else {
		x, err := p.float(k, f)
		if err != nil {
			return 0, err
		}
		if cv.neg {
			x = -x
		}
		v = x * cv.scale
	}
	v += cv.offset
	c := &p.cols[k]
	if !(math.Abs(v) <= maxMagnitude) {
		return 0, p.refuseCol(k, fmt.Sprintf("value %.40q gives %s %g, beyond %g, taken as corrupt", f, c.target, v, maxMagnitude))
	}
	if v < c.lo || v > c.hi || (c.loOpen && v == c.lo) {
		return 0, p.refuseCol(k, fmt.Sprintf("value %.40q gives %s %g, outside %s", f, c.target, v, rangeText(c)))
	}
	return v, nil
}

// float reads a number that is not a plain decimal (exponents and the like).
func (p *mapParser) float(k int, f []byte) (float64, error) {
	// The string aliases the read buffer only for the call (see parser.value).
	x, err := strconv.ParseFloat(unsafe.String(unsafe.SliceData(f), len(f)), 64)
	if err != nil {
		var ne *strconv.NumError
		if errors.As(err, &ne) && errors.Is(ne.Err, strconv.ErrRange) {
			return 0, p.refuseCol(k, fmt.Sprintf("value %.40q is out of range", f))
		}
		return 0, p.refuseCol(k, fmt.Sprintf("value %.40q is not a number", f))
	}
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return 0, p.refuseCol(k, fmt.Sprintf("value %.40q is NaN or infinite", f))
	}
	return x, nil
}
