package telemetry

import "bytes"

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// parseDecimal reads the plain decimals loggers write ([+-]digits[.digits])
// when the digits fit in 53 bits and there are at most 22 after the point:
// then mantissa and power of ten are exact and one IEEE division rounds
// correctly, giving strconv.ParseFloat's result bit for bit. Anything else
// reports false and goes to strconv.
func parseDecimal(b []byte) (float64, bool) {
	mant, frac, neg, ok := decimalParts(b)
	if !ok {
		return 0, false
	}
	v := float64(mant) / pow10[frac]
	if neg {
		v = -v
	}
	return v, true
}

// decimalParts reads [+-]digits[.digits] as mant / 10^frac with mant below
// 2^53 and frac at most 22.
func decimalParts(b []byte) (mant uint64, frac int, neg, ok bool) {
	i := 0
	if len(b) > 0 && (b[0] == '-' || b[0] == '+') {
		neg, i = b[0] == '-', 1
	}
	digits, point := 0, false
	for ; i < len(b); i++ {
		c := b[i]
		switch {
		case c >= '0' && c <= '9':
			mant = mant*10 + uint64(c-'0')
			if mant >= 1<<53 {
				return 0, 0, false, false
			}
			digits++
			if point {
				frac++
			}
		case c == '.' && !point:
			point = true
		default:
			return 0, 0, false, false
		}
	}
	if digits == 0 || frac >= len(pow10) {
		return 0, 0, false, false
	}
	return mant, frac, neg, true
}

// cutField cuts the first field off a native row: up to the first comma
// (native fields are never quoted, see the package documentation), more
// reporting whether a comma followed. When the field is a plain decimal of
// at most 15 digits it is converted on the way, to parseDecimal's result
// (ok): one pass over the bytes where cutting and then converting take two.
// Fifteen digits never reach 2^53, so the digit loops need no bound check.
// Anything else (spaces, blanks, exponents, text, more digits) comes back
// with ok false for the caller's full reading.
func cutField(b []byte) (f []byte, v float64, ok, more bool) {
	end, v, ok := cutFieldAt(b, 0)
	return b[:end], v, ok, end < len(b)
}

// cutFieldAt is cutField for the field of b starting at pos: it returns
// where the field ends (len(b), or the index of the comma after it).
func cutFieldAt(b []byte, pos int) (end int, v float64, ok bool) {
	i, neg := pos, false
	if i < len(b) && (b[i] == '-' || b[i] == '+') {
		neg, i = b[i] == '-', i+1
	}
	start := i
	var mant uint64
	for ; i < len(b); i++ {
		d := b[i] - '0'
		if d > 9 {
			break
		}
		mant = mant*10 + uint64(d)
	}
	digits, frac := i-start, 0
	if i < len(b) && b[i] == '.' {
		i++
		from := i
		for ; i < len(b); i++ {
			d := b[i] - '0'
			if d > 9 {
				break
			}
			mant = mant*10 + uint64(d)
		}
		frac = i - from
		digits += frac
	}
	if digits <= 15 && (i == len(b) || b[i] == ',') {
		v, ok = decimalValue(mant, frac, neg, digits)
		return i, v, ok
	}
	// Not a plain decimal of at most 15 digits: find the field's end.
	if j := bytes.IndexByte(b[i:], ','); j >= 0 {
		return i + j, 0, false
	}
	return len(b), 0, false
}

// decimalValue is parseDecimal's result for the parts read.
func decimalValue(mant uint64, frac int, neg bool, digits int) (float64, bool) {
	if digits == 0 || frac >= len(pow10) {
		return 0, false
	}
	v := float64(mant) / pow10[frac]
	if neg {
		v = -v
	}
	return v, true
}
