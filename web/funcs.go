package web

import (
	"fmt"
	"html/template"
	"math"
	"strings"
	"time"
)

var funcs = template.FuncMap{
	"day":     day,
	"when":    when,
	"hours":   func(h float64) string { return fmt.Sprintf("%.1f h", h) },
	"num":     num,
	"pct":     func(f float64) string { return fmt.Sprintf("%.0f %%", 100*f) },
	"words":   func(s any) string { return strings.ReplaceAll(fmt.Sprint(s), "_", " ") },
	"deref":   deref,
	"derefs":  func(s *string) string { return derefOr(s, "") },
	"since":   since,
	"lower":   strings.ToLower,
	"add":     func(a, b int) int { return a + b },
	"joinstr": strings.Join,
	"minutes": func(a, b time.Time) float64 { return b.Sub(a).Minutes() },
	"band":    func(b *[2]float64) string { return fmt.Sprintf("%s–%s Hz", num(2, b[0]), num(1, b[1])) },
}

func day(t any) string {
	switch v := t.(type) {
	case time.Time:
		if v.IsZero() {
			return ""
		}
		return v.UTC().Format("2006-01-02")
	case *time.Time:
		if v == nil {
			return ""
		}
		return day(*v)
	}
	return ""
}

func when(t any) string {
	switch v := t.(type) {
	case time.Time:
		if v.IsZero() {
			return ""
		}
		return v.UTC().Format("2006-01-02 15:04Z")
	case *time.Time:
		if v == nil {
			return ""
		}
		return when(*v)
	}
	return ""
}

// num formats a number with prec decimals; nil pointers and NaN print as a dash.
func num(prec int, v any) string {
	var f float64
	switch x := v.(type) {
	case float64:
		f = x
	case *float64:
		if x == nil {
			return "–"
		}
		f = *x
	case int:
		f = float64(x)
	default:
		return "–"
	}
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "–"
	}
	return fmt.Sprintf("%.*f", prec, f)
}

func deref(p *float64) float64 {
	if p == nil {
		return 0
	}
	return *p
}

func derefOr(s *string, or string) string {
	if s == nil {
		return or
	}
	return *s
}

// since says how long ago t was, in days or hours, relative to now.
func since(now time.Time, t any) string {
	var v time.Time
	switch x := t.(type) {
	case time.Time:
		v = x
	case *time.Time:
		if x == nil {
			return "never"
		}
		v = *x
	}
	if v.IsZero() {
		return "never"
	}
	d := now.Sub(v)
	switch {
	case d < 0:
		return "in " + span(-d)
	case d < time.Minute:
		return "just now"
	}
	return span(d) + " ago"
}

func span(d time.Duration) string {
	switch {
	case d < time.Hour:
		return fmt.Sprintf("%d min", int(d.Minutes()))
	case d < 48*time.Hour:
		return fmt.Sprintf("%d h", int(d.Hours()))
	}
	return fmt.Sprintf("%d d", int(d.Hours()/24))
}
