package telemetry

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
