package sim

import (
	"math/big"
	"testing"
)

// The rewriting helpers are exact decimal arithmetic; the checks compare
// them with math/big's exact rationals (a general-purpose reference).
func TestShiftDecimal(t *testing.T) {
	for _, c := range []struct {
		v    string
		k    int
		want string
	}{
		{"16.234", 3, "16234"}, {"12.345", 2, "1234.5"}, {"98012.3", -2, "980.123"}, {"0.5", -2, "0.005"},
		{"1.5", 3, "1500"}, {"-0.000", 3, "0"}, {"-3.25", 1, "-32.5"}, {"47.1234567", 7, "471234567"},
		{"0", -3, "0"}, {"120", -1, "12"}, {"0.0001", 4, "1"},
	} {
		got, err := shiftDecimal(c.v, c.k)
		if err != nil || got != c.want {
			t.Errorf("shiftDecimal(%q, %d) = %q, %v; want %q", c.v, c.k, got, err, c.want)
		}
		want, _ := new(big.Rat).SetString(c.v)
		want.Mul(want, new(big.Rat).SetFrac(pow10Int(c.k)))
		if r, _ := new(big.Rat).SetString(got); r.Cmp(want) != 0 {
			t.Errorf("shiftDecimal(%q, %d) = %s, exact %s", c.v, c.k, got, want.FloatString(12))
		}
	}
	if _, err := shiftDecimal("1e3", 1); err == nil {
		t.Error("1e3 is not a plain decimal")
	}
}

func pow10Int(k int) (*big.Int, *big.Int) {
	p := new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(max(k, -k))), nil)
	if k >= 0 {
		return p, big.NewInt(1)
	}
	return big.NewInt(1), p
}

func TestFahrenheit(t *testing.T) {
	// 0 C = 32 F, 100 C = 212 F, -40 C = -40 F (definition of the scales).
	for _, c := range []struct{ c, f string }{{"0.00", "32"}, {"100.00", "212"}, {"-40.00", "-40"},
		{"15.23", "59.414"}, {"-17.78", "-0.004"}} {
		got, err := fahrenheit(c.c)
		if err != nil || got != c.f {
			t.Errorf("fahrenheit(%q) = %q, %v; want %q", c.c, got, err, c.f)
		}
	}
}

func TestNegateAndNS(t *testing.T) {
	for _, c := range []struct{ v, want string }{{"12.5", "-12.5"}, {"-0.3", "0.3"}, {"0.000", "0.000"}} {
		if got, _ := negateDecimal(c.v); got != c.want {
			t.Errorf("negateDecimal(%q) = %q, want %q", c.v, got, c.want)
		}
	}
	if ns, err := decimalNS("12.3456"); err != nil || ns != 12_345_600_000 {
		t.Errorf("decimalNS(12.3456) = %d, %v", ns, err)
	}
}
