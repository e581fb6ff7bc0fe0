package web

import (
	"bytes"
	"fmt"
	"html/template"
	"image/color"
	"regexp"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Chart is a chart rendered on the server: an SVG drawn by gonum/plot, with
// a caption and a legend in the page (legend swatches carry the same class
// as the marks they name, so colour is never the only cue: each also has a
// shape or dash and a label).
type Chart struct {
	ID      string
	Title   string
	SVG     template.HTML
	Legend  []LegendItem
	Caption string
}

// LegendItem names one series of a chart.
type LegendItem struct {
	Class string // CSS class of the swatch, the same as the series' marks
	Label string
}

// palette: our own, chosen for contrast on white (each at least 3:1 for
// graphical objects, WCAG 2.1 SC 1.4.11) and told apart by shape or dash too.
var (
	inkBlue    = color.RGBA{0x1d, 0x4e, 0x89, 0xff}
	inkTeal    = color.RGBA{0x0b, 0x6e, 0x69, 0xff}
	inkPlum    = color.RGBA{0x7a, 0x2e, 0x6e, 0xff}
	inkRust    = color.RGBA{0xa3, 0x3b, 0x12, 0xff}
	inkOchre   = color.RGBA{0x8a, 0x5a, 0x00, 0xff}
	inkSlate   = color.RGBA{0x44, 0x4f, 0x5a, 0xff}
	inkCrimson = color.RGBA{0xb0, 0x1e, 0x2d, 0xff}
	bandFill   = color.NRGBA{0x1d, 0x4e, 0x89, 0x40}
	barFill    = color.RGBA{0x0b, 0x6e, 0x69, 0xff}
)

// plotTextHandler lays out plain text for the vg canvas drawings.
var plotTextHandler = plot.DefaultTextHandler

// chartFont is the sans face gonum measures text with; browsers fall back
// to a similar face when Liberation Sans is not installed.
var chartFont = font.Font{Typeface: "Liberation", Variant: "Sans"}

// plotBuilder is a gonum plot with our text styles and a record of which
// colour stands for which series class.
type plotBuilder struct {
	p       *plot.Plot
	classes map[string]string // "#RRGGBB" -> class
	legend  []LegendItem
}

func newPlot(xLabel, yLabel string) *plotBuilder {
	p := plot.New()
	for _, ts := range []*textSize{{&p.Title.TextStyle, 12}, {&p.X.Label.TextStyle, 11}, {&p.Y.Label.TextStyle, 11},
		{&p.X.Tick.Label, 10}, {&p.Y.Tick.Label, 10}} {
		ts.style.Font = chartFont
		ts.style.Font.Size = vg.Points(ts.size)
		ts.style.Color = color.RGBA{0x22, 0x28, 0x30, 0xff}
	}
	p.X.Label.Text, p.Y.Label.Text = xLabel, yLabel
	p.X.Padding, p.Y.Padding = vg.Points(2), vg.Points(2)
	return &plotBuilder{p: p, classes: map[string]string{}}
}

type textSize struct {
	style *draw.TextStyle
	size  float64
}

// series registers a colour for a class (and a legend entry when label is
// set) and returns the colour to draw with. Each class needs its own colour.
func (b *plotBuilder) series(class, label string, c color.Color) color.Color {
	b.classes[hexOf(c)] = class
	if label != "" {
		b.legend = append(b.legend, LegendItem{Class: class, Label: label})
	}
	return c
}

// hexOf is the colour as vgsvg writes it: un-premultiplied, upper case.
func hexOf(c color.Color) string {
	r, g, bl, a := c.RGBA()
	if a == 0 {
		return "#000000"
	}
	f := 255.0 / float64(a)
	return fmt.Sprintf("#%02X%02X%02X", int(float64(r)*f), int(float64(g)*f), int(float64(bl)*f))
}

// render draws the plot as SVG of w x h points and returns the chart.
func (b *plotBuilder) render(id, title, caption string, w, h vg.Length) (Chart, error) {
	c := vgsvg.New(w, h)
	b.p.Draw(draw.New(c))
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return Chart{}, err
	}
	return Chart{ID: id, Title: title, Caption: caption, Legend: b.legend,
		SVG: inlineSVG(buf.Bytes(), id, title, b.classes)}, nil
}

var (
	svgProlog  = regexp.MustCompile(`(?s)^.*?<svg `)
	svgSize    = regexp.MustCompile(`width="[^"]*" height="[^"]*" `)
	styleAttr  = regexp.MustCompile(`style="([^"]*)"`)
	fillAttr   = regexp.MustCompile(`fill="(#[0-9A-F]{6})"`)
	strokeAttr = regexp.MustCompile(`stroke="(#[0-9A-F]{6})"`)
)

// inlineSVG makes gonum's SVG fit to go inline in a page under a content
// security policy without 'unsafe-inline' styles: the prolog and fixed size
// go (the viewBox stays, so CSS scales it), style attributes become SVG
// presentation attributes, marks of a registered colour get their series
// class, and the chart gets an accessible name. Text in the SVG is escaped
// by vgsvg.
func inlineSVG(raw []byte, id, title string, classes map[string]string) template.HTML {
	s := string(raw)
	s = svgProlog.ReplaceAllString(s, "<svg ")
	s = svgSize.ReplaceAllString(s, "")
	s = strings.Replace(s, "<svg ", fmt.Sprintf(`<svg class="chart" role="img" aria-labelledby="%s-t" `, id), 1)
	s = strings.Replace(s, ">", fmt.Sprintf(">\n<title id=\"%s-t\">%s</title>", id, template.HTMLEscapeString(title)), 1)
	s = styleAttr.ReplaceAllStringFunc(s, func(m string) string {
		decl := styleAttr.FindStringSubmatch(m)[1]
		var out []string
		for _, d := range strings.Split(decl, ";") {
			k, v, ok := strings.Cut(d, ":")
			if !ok {
				continue
			}
			k, v = strings.TrimSpace(k), strings.TrimSpace(v)
			if k == "font-family" && v == "Liberation Sans" {
				v = "Liberation Sans, Arial, Helvetica, sans-serif"
			}
			out = append(out, fmt.Sprintf(`%s="%s"`, k, template.HTMLEscapeString(v)))
		}
		return strings.Join(out, " ")
	})
	// Class the marks: a path filled or stroked in a series colour.
	lines := strings.Split(s, "\n")
	for i, ln := range lines {
		if !strings.HasPrefix(ln, "<path") {
			continue
		}
		class := ""
		if m := fillAttr.FindStringSubmatch(ln); m != nil {
			class = classes[m[1]]
		}
		if m := strokeAttr.FindStringSubmatch(ln); class == "" && m != nil {
			class = classes[m[1]]
		}
		if class != "" {
			lines[i] = strings.Replace(ln, "<path ", `<path class="`+class+`" `, 1)
		}
	}
	return template.HTML(strings.Join(lines, "\n"))
}
