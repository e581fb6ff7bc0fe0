package web

import (
	"math"
	"regexp"
	"strconv"
	"testing"
)

// luminance is the relative luminance of an sRGB colour "#rrggbb" by the
// WCAG 2.1 definition (W3C, "relative luminance", using the sRGB
// transfer function with the 0.03928 threshold as WCAG gives it).
func luminance(t *testing.T, hex string) float64 {
	t.Helper()
	var c [3]float64
	for i := range c {
		v, err := strconv.ParseUint(hex[1+2*i:3+2*i], 16, 8)
		if err != nil {
			t.Fatalf("colour %q: %v", hex, err)
		}
		s := float64(v) / 255
		if s <= 0.03928 {
			c[i] = s / 12.92
		} else {
			c[i] = math.Pow((s+0.055)/1.055, 2.4)
		}
	}
	return 0.2126*c[0] + 0.7152*c[1] + 0.0722*c[2]
}

func contrast(t *testing.T, a, b string) float64 {
	la, lb := luminance(t, a), luminance(t, b)
	return (math.Max(la, lb) + 0.05) / (math.Min(la, lb) + 0.05)
}

// Check values of the formula: black on white is 21:1 (its maximum, by the
// definition); #777777 on white 4.48:1 (from memory: the often quoted grey
// that just misses AA).
func TestContrastFormula(t *testing.T) {
	if c := contrast(t, "#000000", "#ffffff"); math.Abs(c-21) > 1e-9 {
		t.Fatalf("black on white %.3f, want 21", c)
	}
	if c := contrast(t, "#777777", "#ffffff"); math.Abs(c-4.48) > 0.01 {
		t.Fatalf("#777 on white %.3f, want 4.48", c)
	}
}

// Every text colour of the board's stylesheet on the grounds it is used on
// meets WCAG AA for normal text (4.5:1).
func TestBoardColoursMeetAA(t *testing.T) {
	css, err := assetFS.ReadFile("assets/board.css")
	if err != nil {
		t.Fatal(err)
	}
	vars := map[string]string{}
	for _, m := range regexp.MustCompile(`--([a-z-]+):\s*(#[0-9a-fA-F]{6})`).FindAllStringSubmatch(string(css), -1) {
		vars[m[1]] = m[2]
	}
	pairs := [][2]string{
		{"ink", "paper"}, {"ink", "card"}, {"muted", "paper"}, {"muted", "card"}, {"link", "card"}, {"link", "paper"},
		{"head-ink", "head"}, {"go", "go-bg"}, {"stop", "stop-bg"}, {"soon", "soon-bg"}, {"info", "info-bg"},
		{"go", "card"}, {"stop", "card"},
	}
	for _, p := range pairs {
		fg, bg := vars[p[0]], vars[p[1]]
		if fg == "" || bg == "" {
			t.Errorf("--%s or --%s is not in the stylesheet", p[0], p[1])
			continue
		}
		if c := contrast(t, fg, bg); c < 4.5 {
			t.Errorf("--%s %s on --%s %s: %.2f:1, below 4.5:1", p[0], fg, p[1], bg, c)
		}
	}
	// The footer's grounds, written literally in the stylesheet.
	for _, bg := range []string{"#fff8e6", "#fde9e3"} {
		if c := contrast(t, vars["ink"], bg); c < 4.5 {
			t.Errorf("footer text on %s: %.2f:1", bg, c)
		}
		if c := contrast(t, vars["muted"], bg); c < 4.5 {
			t.Errorf("footer muted text on %s: %.2f:1", bg, c)
		}
	}
}
