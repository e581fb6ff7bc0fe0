package fleet

import (
	"fmt"
	"regexp"
)

// Rotation is a rotor's spin direction seen from above.
type Rotation string

const (
	CW  Rotation = "cw"
	CCW Rotation = "ccw"
)

// Valid reports whether r is cw or ccw.
func (r Rotation) Valid() bool { return r == CW || r == CCW }

// Position is one rotor place on a layout.
type Position struct {
	Label    string   `json:"label"`
	Rotation Rotation `json:"rotation"`
	ArmDeg   float64  `json:"arm_deg"`
}

// Layout is an ordered set of rotor positions.
type Layout struct {
	Name      string     `json:"name"`
	Builtin   bool       `json:"builtin"`
	Positions []Position `json:"positions"`
}

var (
	layoutNameRe = regexp.MustCompile(`^[a-z0-9][a-z0-9-]{0,39}$`)
	labelRe      = regexp.MustCompile(`^[a-z0-9][a-z0-9_-]{0,31}$`)
)

// Position returns the position with the given label.
func (l Layout) Position(label string) (Position, bool) {
	for _, p := range l.Positions {
		if p.Label == label {
			return p, true
		}
	}
	return Position{}, false
}

// Validate checks a user-defined layout.
func (l Layout) Validate() error {
	if !layoutNameRe.MatchString(l.Name) {
		return FieldError("name", "must be 1-40 lower-case letters, digits or '-'")
	}
	if n := len(l.Positions); n < 1 || n > 16 {
		return FieldError("positions", "must list 1 to 16 positions, got %d", n)
	}
	seen := map[string]bool{}
	for i, p := range l.Positions {
		f := fmt.Sprintf("positions[%d]", i)
		if !labelRe.MatchString(p.Label) {
			return FieldError(f+".label", "must be 1-32 lower-case letters, digits, '_' or '-'")
		}
		if seen[p.Label] {
			return FieldError(f+".label", "duplicate label %q", p.Label)
		}
		seen[p.Label] = true
		if !p.Rotation.Valid() {
			return FieldError(f+".rotation", "must be cw or ccw")
		}
		if p.ArmDeg < 0 || p.ArmDeg >= 360 {
			return FieldError(f+".arm_deg", "must be in [0, 360)")
		}
	}
	return nil
}

// ValidLabel reports whether s is a well-formed position label.
func ValidLabel(s string) bool { return labelRe.MatchString(s) }
