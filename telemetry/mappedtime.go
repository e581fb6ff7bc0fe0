package telemetry

import (
	"bytes"
	"fmt"
	"math"
	"time"
	"unsafe"

	"github.com/rotorwright/rotorwright/fleet"
)

// time reads the time field as seconds after the log's start (origin
// start) or after the first sample (epoch, rfc3339, which also set the
// log's start time).
func (p *mapParser) time(k int, f []byte) (float64, error) {
	f = trimSpace(f)
	if len(f) == 0 {
		return 0, p.refuseCol(k, "empty time")
	}
	first := p.log.Rows == 0
	if p.m.Time.Origin == fleet.OriginRFC3339 {
		t, err := p.rfc3339(f)
		if err != nil {
			return 0, p.refuseCol(k, fmt.Sprintf("time %.40q is not an RFC 3339 time", f))
		}
		if first {
			p.t0 = t
			p.log.Meta.Start = &p.t0
		}
		return float64(t.Sub(p.t0)) / 1e9, nil
	}
	ns, ok := timeNS(f, p.unit)
	if !ok {
		x, err := p.float(k, f)
		if err != nil {
			return 0, err
		}
		x *= math.Pow10(p.unit)
		if math.Abs(x) >= math.MaxInt64 {
			return 0, p.refuseCol(k, fmt.Sprintf("time %.40q is out of range", f))
		}
		ns = int64(math.Round(x))
	}
	if p.m.Time.Origin == fleet.OriginStart {
		return float64(ns) / 1e9, nil
	}
	if first {
		p.t0ns = ns
		start := time.Unix(0, ns).UTC()
		p.log.Meta.Start = &start
	}
	d := ns - p.t0ns
	if (d > 0) != (ns > p.t0ns) {
		return 0, p.refuseCol(k, fmt.Sprintf("time %.40q is too far from the first sample", f))
	}
	return float64(d) / 1e9, nil
}

// rfc3339 parses an RFC 3339 time, also with a space between date and time
// (RFC 3339 section 5.6 allows it). Rows of one minute share date, hour,
// minute and zone: time.Parse reads the first of each minute, and the
// others add their seconds to it.
func (p *mapParser) rfc3339(f []byte) (time.Time, error) {
	if len(f) > 10 && f[10] == ' ' {
		p.tbuf = append(p.tbuf[:0], f...)
		p.tbuf[10] = 'T'
		f = p.tbuf
	}
	if len(p.tmin) > 0 && len(f) > len(p.tmin)+len(p.tzone) && bytes.HasPrefix(f, p.tmin) && bytes.HasSuffix(f, p.tzone) {
		if ns, ok := secondsNS(f[len(p.tmin) : len(f)-len(p.tzone)]); ok {
			return p.tbase.Add(time.Duration(ns)), nil
		}
	}
	// The string aliases the buffer only for the call; the error is not kept.
	t, err := time.Parse(time.RFC3339Nano, unsafe.String(unsafe.SliceData(f), len(f)))
	if err != nil {
		return t, err
	}
	p.tmin = p.tmin[:0]
	if len(f) > 19 && f[16] == ':' {
		end := 19 // "YYYY-MM-DDTHH:MM:SS", then an optional fraction, then the zone
		if f[end] == '.' {
			for end++; end < len(f) && f[end] >= '0' && f[end] <= '9'; end++ {
			}
		}
		if ns, ok := secondsNS(f[17:end]); ok && end < len(f) && (f[end] == 'Z' || f[end] == '+' || f[end] == '-') {
			p.tmin = append(p.tmin, f[:17]...)
			p.tzone = append(p.tzone[:0], f[end:]...)
			p.tbase = t.Add(-time.Duration(ns))
		}
	}
	return t, nil
}

// secondsNS reads "SS" or "SS.fraction" (at most 9 fraction digits, SS
// 00..59) as nanoseconds.
func secondsNS(b []byte) (int64, bool) {
	if len(b) < 2 || len(b) == 3 || len(b) > 12 || b[0] < '0' || b[0] > '5' || b[1] < '0' || b[1] > '9' {
		return 0, false
	}
	ns := int64(b[0]-'0')*10 + int64(b[1]-'0')
	if len(b) > 2 && b[2] != '.' {
		return 0, false
	}
	digits := 0
	for _, c := range b[min(len(b), 3):] {
		if c < '0' || c > '9' {
			return 0, false
		}
		ns = ns*10 + int64(c-'0')
		digits++
	}
	return ns * int64(pow10u[9-digits]), true
}

// pow10u are the powers of ten a uint64 holds.
var pow10u = [...]uint64{1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14,
	1e15, 1e16, 1e17, 1e18, 1e19}

// timeNS reads a plain decimal time, in units of 10^unit ns, as integer
// nanoseconds (rounded to the nearest ns), exactly: epoch nanoseconds
// exceed the 53 bits a double holds.
func timeNS(b []byte, unit int) (int64, bool) {
	i, neg := 0, false
	if len(b) > 0 && (b[0] == '-' || b[0] == '+') {
		neg, i = b[0] == '-', 1
	}
	var mant uint64
	digits, frac, point := 0, 0, false
	for ; i < len(b); i++ {
		c := b[i]
		switch {
		case c >= '0' && c <= '9':
			if mant > (math.MaxInt64-9)/10 {
				return 0, false
			}
			mant = mant*10 + uint64(c-'0')
			digits++
			if point {
				frac++
			}
		case c == '.' && !point:
			point = true
		default:
			return 0, false
		}
	}
	if digits == 0 {
		return 0, false
	}
	if e := unit - frac; e > 0 {
		for range e {
			if mant > math.MaxInt64/10 {
				return 0, false
			}
			mant *= 10
		}
	} else if e < 0 {
		if -e >= len(pow10u) {
			mant = 0
		} else {
			d := pow10u[-e]
			q, r := mant/d, mant%d
			if r >= d-r {
				q++
			}
			mant = q
		}
	}
	if neg {
		return -int64(mant), true
	}
	return int64(mant), true
}
