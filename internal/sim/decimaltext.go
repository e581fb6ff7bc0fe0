package sim

import (
	"fmt"
	"strconv"
	"strings"
)

// Exact arithmetic on the decimal text of a log field, so a rewritten
// layout carries the same numbers as the native log.

// splitDecimal reads [-]digits[.digits] as its sign, its digits without the
// point, and how many of them follow the point.
func splitDecimal(v string) (neg bool, digits string, frac int, err error) {
	s := v
	if strings.HasPrefix(s, "-") {
		neg, s = true, s[1:]
	}
	ip, fp, _ := strings.Cut(s, ".")
	digits = ip + fp
	if digits == "" || strings.Trim(digits, "0123456789") != "" {
		return false, "", 0, fmt.Errorf("%q is not a plain decimal", v)
	}
	return neg, digits, len(fp), nil
}

// shiftDecimal returns v * 10^k, written without needless zeros.
func shiftDecimal(v string, k int) (string, error) {
	neg, d, frac, err := splitDecimal(v)
	if err != nil {
		return "", err
	}
	frac -= k
	if frac < 0 {
		d += strings.Repeat("0", -frac)
		frac = 0
	}
	if len(d) <= frac {
		d = strings.Repeat("0", frac-len(d)+1) + d
	}
	ip, fp := strings.TrimLeft(d[:len(d)-frac], "0"), strings.TrimRight(d[len(d)-frac:], "0")
	if ip == "" {
		ip = "0"
	}
	out := ip
	if fp != "" {
		out += "." + fp
	}
	if neg && out != "0" {
		out = "-" + out
	}
	return out, nil
}

// decimalNS reads seconds as whole nanoseconds.
func decimalNS(v string) (int64, error) {
	s, err := shiftDecimal(v, 9)
	if err != nil {
		return 0, err
	}
	return strconv.ParseInt(s, 10, 64)
}

// negateDecimal returns -v.
func negateDecimal(v string) (string, error) {
	if _, _, _, err := splitDecimal(v); err != nil {
		return "", err
	}
	if s, ok := strings.CutPrefix(v, "-"); ok {
		return s, nil
	}
	if strings.Trim(v, "0.") == "" {
		return v, nil
	}
	return "-" + v, nil
}

// fahrenheit converts degrees Celsius to Fahrenheit, F = C * 9/5 + 32,
// exactly: one more decimal than C carries the result.
func fahrenheit(v string) (string, error) {
	neg, d, frac, err := splitDecimal(v)
	if err != nil {
		return "", err
	}
	m, err := strconv.ParseInt(d, 10, 64)
	if err != nil {
		return "", err
	}
	if neg {
		m = -m
	}
	p := int64(1)
	for range frac + 1 {
		p *= 10
	}
	return shiftDecimal(strconv.FormatInt(m*18+32*p, 10), -(frac + 1))
}
