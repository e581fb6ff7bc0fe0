package sim

import (
	"math"
	"strconv"
)

var pow10 = [...]float64{1, 10, 100, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8}

// appendFixed appends v with prec decimals, like strconv.AppendFloat(b, v,
// 'f', prec, 64) but through integer formatting, which is several times
// faster; it differs only at exact decimal ties and never prints "-0".
func appendFixed(b []byte, v float64, prec int) []byte {
	if prec < 0 || prec >= len(pow10) || math.IsNaN(v) || math.Abs(v) >= 1e9 {
		return strconv.AppendFloat(b, v, 'f', prec, 64)
	}
	scaled := math.Round(v * pow10[prec])
	n := int64(scaled)
	if n < 0 {
		b = append(b, '-')
		n = -n
	}
	if prec == 0 {
		return strconv.AppendInt(b, n, 10)
	}
	p := int64(pow10[prec])
	b = strconv.AppendInt(b, n/p, 10)
	b = append(b, '.')
	frac := n % p
	for d := p / 10; d > 1 && frac < d; d /= 10 {
		b = append(b, '0')
	}
	return strconv.AppendInt(b, frac, 10)
}
