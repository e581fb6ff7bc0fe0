package web

import (
	"bytes"
	"image/color"
	"math"

	xfont "golang.org/x/image/font"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"github.com/rotorwright/rotorwright/fleet"
)

// PositionView is one rotor position of an airframe as drawn and listed:
// where it sits, which way it turns, and the motor and propeller there.
type PositionView struct {
	Label    string
	Rotation fleet.Rotation
	ArmDeg   float64
	Motor    *Gauge
	Prop     *Gauge
}

// Gauge is a fitted part with one figure of its wear.
type Gauge struct {
	PartID   string
	Serial   string
	Fraction float64 // 0..1 of its life or limit; negative when unknown
	Text     string  // e.g. "bearing 41 %"
	Level    string  // go, soon or stop
}

var (
	topInk    = color.RGBA{0x22, 0x28, 0x30, 0xff}
	topArm    = color.RGBA{0x6b, 0x72, 0x7a, 0xff}
	topDisc   = color.RGBA{0xe9, 0xee, 0xf4, 0xff}
	topStop   = color.RGBA{0xb0, 0x1e, 0x2d, 0xff}
	gaugeBack = color.RGBA{0xdd, 0xdf, 0xe3, 0xff}
	levelInk  = map[string]color.RGBA{"go": {0x1f, 0x6f, 0x3f, 0xff}, "soon": {0x9a, 0x62, 0x00, 0xff},
		"stop": topStop, "": topArm}
)

// TopView draws the airframe from above, nose up: each arm at its angle
// (clockwise from forward, as the layout gives it), the rotor disc with an
// arrow for its turning direction, and beside it the motor and propeller
// fitted there with a bar gauge of their wear. Drawn with gonum's vg canvas;
// the page lists the same facts in a table with links.
func TopView(id, title string, positions []PositionView) (Chart, error) {
	const size = 640.0
	c := vgsvg.New(vg.Points(size), vg.Points(size))
	dc := draw.New(c)
	cx, cy := size/2, size/2
	n := len(positions)
	arm := 150.0 // leaves room for the callouts around it
	disc := math.Min(46, arm*math.Sin(math.Pi/math.Max(float64(n), 2))*0.8)
	textAt := func(f font.Font, size float64, clr color.Color, xa text.XAlignment, x, y float64, s string) {
		f.Size = vg.Points(size)
		dc.FillText(draw.TextStyle{Color: clr, Font: f, XAlign: xa, YAlign: text.YCenter, Handler: plotTextHandler},
			vg.Point{X: vg.Points(x), Y: vg.Points(y)}, s)
	}
	pt := func(x, y float64) vg.Point { return vg.Point{X: vg.Points(x), Y: vg.Points(y)} }
	line := func(clr color.Color, w float64, pts ...vg.Point) {
		dc.StrokeLines(draw.LineStyle{Color: clr, Width: vg.Points(w)}, pts)
	}
	bold := chartFont
	bold.Weight = xfont.WeightBold

	// Body and the forward arrow.
	body := vg.Path{}
	body.Move(pt(cx+30, cy))
	body.Arc(pt(cx, cy), vg.Points(30), 0, 2*math.Pi)
	body.Close()
	dc.SetColor(topDisc)
	dc.Fill(body)
	dc.SetColor(topArm)
	dc.SetLineWidth(vg.Points(1.5))
	dc.Stroke(body)
	nose := []vg.Point{pt(cx, cy+22), pt(cx-9, cy+6), pt(cx+9, cy+6)}
	dc.FillPolygon(topInk, nose)
	textAt(bold, 10, topInk, text.XCenter, cx, cy-10, "FWD")

	for _, p := range positions {
		a := p.ArmDeg * math.Pi / 180
		sx, sy := math.Sin(a), math.Cos(a)
		rx, ry := cx+arm*sx, cy+arm*sy
		line(topArm, 5, pt(cx+30*sx, cy+30*sy), pt(rx-disc*sx, ry-disc*sy))
		// Disc: red outline when a motor or propeller is missing.
		d := vg.Path{}
		d.Move(pt(rx+disc, ry))
		d.Arc(pt(rx, ry), vg.Points(disc), 0, 2*math.Pi)
		d.Close()
		dc.SetColor(topDisc)
		dc.Fill(d)
		outline := topArm
		if p.Motor == nil || p.Prop == nil {
			outline = topStop
		}
		dc.SetColor(outline)
		dc.SetLineWidth(vg.Points(2))
		dc.Stroke(d)
		// Turning arrow: a 270 degree arc seen from above, arrowhead at its end.
		r := disc * 0.72
		sweep := -1.5 * math.Pi // cw seen from above is negative in these axes
		if p.Rotation == fleet.CCW {
			sweep = 1.5 * math.Pi
		}
		start := math.Pi / 2
		arc := vg.Path{}
		arc.Move(pt(rx+r*math.Cos(start), ry+r*math.Sin(start)))
		arc.Arc(pt(rx, ry), vg.Points(r), start, sweep)
		dc.SetColor(topInk)
		dc.SetLineWidth(vg.Points(1.4))
		dc.Stroke(arc)
		end := start + sweep
		ex, ey := rx+r*math.Cos(end), ry+r*math.Sin(end)
		dir := 1.0
		if sweep < 0 {
			dir = -1
		}
		tx, ty := -math.Sin(end)*dir, math.Cos(end)*dir // tangent along the sweep
		nx, ny := math.Cos(end), math.Sin(end)
		dc.FillPolygon(topInk, []vg.Point{pt(ex+6*tx, ey+6*ty), pt(ex-3*tx+4*nx, ey-3*ty+4*ny), pt(ex-3*tx-4*nx, ey-3*ty-4*ny)})
		textAt(bold, 15, topInk, text.XCenter, rx, ry+5, p.Label)
		textAt(chartFont, 11, topInk, text.XCenter, rx, ry-11, string(p.Rotation))
	}

	// The callouts, in a group of their own (marked below) that the style
	// sheet hides on a phone: scaled to a phone's width their text is a few
	// pixels high and crowds the discs, and the table under the drawing
	// gives the same parts and gauges, with links.
	c.Push()
	c.Translate(vg.Point{})
	for _, p := range positions {
		a := p.ArmDeg * math.Pi / 180
		sx, sy := math.Sin(a), math.Cos(a)
		rx, ry := cx+arm*sx, cy+arm*sy
		// Callout beyond the disc, on the outer side.
		lx := rx + (disc+10)*sx
		xa := text.XLeft
		if sx < -0.2 {
			xa = text.XRight
		} else if math.Abs(sx) <= 0.2 {
			xa = text.XCenter
		}
		ly := ry + (disc+8)*sy
		if sy < 0 {
			ly -= 46
		} else {
			ly += 36
			// A block above a disc and over it sideways (near the nose on
			// an octo) reads down towards the disc: its last line, 64 pt
			// under its first, must clear the disc's top.
			if math.Abs(sx) < 0.7 {
				ly = math.Max(ly, ry+disc+64+10)
			}
		}
		for i, g := range []*Gauge{p.Motor, p.Prop} {
			kind := [...]string{"motor", "prop"}[i]
			y := ly - float64(i)*42
			if g == nil {
				textAt(bold, 13, topStop, xa, lx, y, "no "+kind)
				continue
			}
			textAt(chartFont, 13, topInk, xa, lx, y, g.Serial)
			// The bar and its figure sit under the serial, aligned like it.
			w := 74.0
			x0 := lx
			switch xa {
			case text.XRight:
				x0 = lx - w
			case text.XCenter:
				x0 = lx - w/2
			}
			y0 := y - 13
			dc.FillPolygon(gaugeBack, []vg.Point{pt(x0, y0), pt(x0+w, y0), pt(x0+w, y0+6), pt(x0, y0+6)})
			if g.Fraction >= 0 {
				f := math.Min(g.Fraction, 1)
				dc.FillPolygon(levelInk[g.Level], []vg.Point{pt(x0, y0), pt(x0+w*f, y0), pt(x0+w*f, y0+6), pt(x0, y0+6)})
			}
			textAt(chartFont, 12, levelInk[g.Level], xa, lx, y0-9, g.Text)
		}
	}
	c.Pop()
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return Chart{}, err
	}
	// vgsvg writes the translation by nothing as the callouts' group; the
	// drawing has no other, so the first is theirs.
	svg := bytes.Replace(buf.Bytes(), []byte(`<g transform="translate(0, 0)">`), []byte(`<g class="callouts" transform="translate(0, 0)">`), 1)
	return Chart{ID: id, Title: title, SVG: inlineSVG(svg, id, title, nil),
		Caption: "Seen from above, nose up; arrows show each rotor's turning direction; bars show bearing life used (motor) and " +
			"the propeller's replacement limit used (on a narrow screen, in the table below)."}, nil
}
