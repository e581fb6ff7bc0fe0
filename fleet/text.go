package fleet

import "unicode"

// invisible are letters and symbols that render as blank space (Hangul
// fillers, the braille blank); with the format characters (zero-width
// space, joiners, BOM: category Cf) and spaces they can make a reason that
// looks given but says nothing.
var invisible = map[rune]bool{0x115F: true, 0x1160: true, 0x3164: true, 0xFFA0: true, 0x2800: true}

// Visible reports whether s has at least one character a reader can see:
// a letter, digit, punctuation mark or symbol that is not a blank filler.
// A required reason made only of spaces, zero-width characters or other
// invisible code points is no reason.
func Visible(s string) bool {
	for _, r := range s {
		if unicode.In(r, unicode.L, unicode.N, unicode.P, unicode.S) && !invisible[r] {
			return true
		}
	}
	return false
}

// checkText bounds a text member's length in characters; a required one
// (min > 0) must also be Visible.
func checkText(field, s string, min, max int) error {
	n := len([]rune(s))
	if min > 0 && (n == 0 || !Visible(s)) {
		return FieldError(field, "is required: give it in visible characters")
	}
	if n < min || n > max {
		return FieldError(field, "must be %d to %d characters", min, max)
	}
	return nil
}
