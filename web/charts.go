package web

import (
	"fmt"
	"image/color"
	"math"
	"strconv"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
)

// Chart sizes in points: wide and short, scaled to the card by CSS.
const (
	chartW = 560
	chartH = 300
)

func scatter(xy plotter.XYs, c color.Color, shape draw.GlyphDrawer, r float64) *plotter.Scatter {
	s, _ := plotter.NewScatter(xy)
	s.GlyphStyle = draw.GlyphStyle{Color: c, Shape: shape, Radius: vg.Points(r)}
	return s
}

func polyline(xy plotter.XYs, c color.Color, width float64, dashes ...float64) *plotter.Line {
	l, _ := plotter.NewLine(xy)
	l.LineStyle = draw.LineStyle{Color: c, Width: vg.Points(width)}
	for _, d := range dashes {
		l.LineStyle.Dashes = append(l.LineStyle.Dashes, vg.Points(d))
	}
	return l
}

// label adds a text annotation at (x, y) in data units.
func (b *plotBuilder) label(x, y float64, s string, c color.Color, xOff float64) {
	l, err := plotter.NewLabels(plotter.XYLabels{XYs: plotter.XYs{{X: x, Y: y}}, Labels: []string{s}})
	if err != nil {
		return
	}
	for i := range l.TextStyle {
		l.TextStyle[i].Font = chartFont
		l.TextStyle[i].Font.Size = vg.Points(10)
		l.TextStyle[i].Color = c
		l.TextStyle[i].Handler = plotTextHandler
	}
	l.Offset = vg.Point{X: vg.Points(xOff), Y: vg.Points(3)}
	b.p.Add(l)
}

func unix(t time.Time) float64 { return float64(t.Unix()) }

// dateAxis makes the x axis show calendar dates of unix seconds, as days
// within a few months and as months beyond.
func (b *plotBuilder) dateAxis(from, to float64) {
	format := "Jan 2"
	if to-from > 150*86400 {
		format = "2006-01"
	}
	b.p.X.Tick.Marker = plot.TimeTicks{Format: format, Time: func(f float64) time.Time { return time.Unix(int64(f), 0).UTC() }}
}

// forecastBand adds a forecast's curve and its prediction band to the plot
// and returns the curve's x and y extent.
func (b *plotBuilder) forecastBand(fc *health.ForecastView, fitLabel string) (xMax, yMin, yMax float64) {
	yMin, yMax = math.Inf(1), math.Inf(-1)
	if fc == nil || len(fc.Curve) < 2 {
		return 0, yMin, yMax
	}
	band, fit := plotter.XYs{}, plotter.XYs{}
	for _, p := range fc.Curve {
		band = append(band, plotter.XY{X: p.Cycle, Y: p.Hi})
		fit = append(fit, plotter.XY{X: p.Cycle, Y: p.Value})
		xMax, yMin, yMax = math.Max(xMax, p.Cycle), math.Min(yMin, p.Lo), math.Max(yMax, p.Hi)
	}
	for i := len(fc.Curve) - 1; i >= 0; i-- {
		band = append(band, plotter.XY{X: fc.Curve[i].Cycle, Y: fc.Curve[i].Lo})
	}
	if poly, err := plotter.NewPolygon(band); err == nil {
		poly.Color = b.series("s-band", fmt.Sprintf("%.0f %% prediction band", 100*fc.Level), bandFill)
		poly.LineStyle.Width = 0
		b.p.Add(poly)
	}
	b.p.Add(polyline(fit, b.series("s-fit", fmt.Sprintf("%s (%s)", fitLabel, fc.Model), inkBlue), 2))
	return xMax, yMin, yMax
}

// crossingCaption says where a forecast crosses its threshold, or why it
// does not say.
func crossingCaption(fc *health.ForecastView, what string) string {
	switch {
	case fc == nil:
		return "No forecast yet."
	case fc.FittedSustained == nil && fc.Reason != "":
		return "No forecast: " + fc.Reason + "."
	case fc.FittedSustained == nil:
		return "The fitted curve does not reach " + what + " within the forecast horizon."
	}
	when := "no recent use to date it"
	if fc.Date != nil {
		when = "about " + fc.Date.UTC().Format("2006-01-02") + " at the last 30 days' use"
	}
	s := fmt.Sprintf("The fitted curve reaches %s for good at cycle %.0f (%s).", what, *fc.FittedSustained, when)
	if fc.IntervalFrom != nil {
		s += fmt.Sprintf(" The interval of the crossing runs from cycle %.0f", *fc.IntervalFrom)
		if fc.IntervalTo != nil {
			s += fmt.Sprintf(" to %.0f", *fc.IntervalTo)
		} else {
			s += " to beyond the horizon"
		}
		s += "."
	}
	return s
}

// crossingLine marks the forecast crossing with a vertical line and a label.
func (b *plotBuilder) crossingLine(fc *health.ForecastView, yMin, yMax float64) {
	if fc == nil || fc.FittedSustained == nil {
		return
	}
	x := *fc.FittedSustained
	b.p.Add(polyline(plotter.XYs{{X: x, Y: yMin}, {X: x, Y: yMax}}, b.series("s-cross", "forecast crossing", inkOchre), 1.5, 2, 3))
	when := ""
	if fc.Date != nil {
		when = " · " + fc.Date.UTC().Format("2006-01-02")
	}
	b.label(x, yMax, fmt.Sprintf("cycle %.0f%s", x, when), inkOchre, -4)
}

// PackCapacityChart draws a pack's capacity estimates against equivalent
// full cycles with the forecast's fitted fade curve, its prediction band,
// the end-of-life line and the forecast crossing. Each estimate is one mark
// of class "pt" (and its source's class), so the page's marks can be
// counted.
func PackCapacityChart(pv *health.PackView) (Chart, error) {
	b := newPlot("equivalent full cycles", "capacity (mAh)")
	threshold := pv.Thresholds.RetireSoH * pv.RatedMah
	if pv.Forecast != nil && pv.Forecast.Threshold > 0 {
		threshold = pv.Forecast.Threshold
	}
	xMax, yMin, yMax := b.forecastBand(pv.Forecast, "fitted fade")
	xMax = math.Max(xMax, math.Max(pv.Cycles, 1))
	yMin, yMax = math.Min(yMin, threshold), math.Max(yMax, pv.RatedMah)
	sources := []struct {
		source, class, label string
		c                    color.Color
		shape                draw.GlyphDrawer
	}{
		// A darker blue than the fitted curve, so the points stand apart from it.
		{"flight_rest_voltages", "s-cap-flight", "● from a flight's rest voltages", color.RGBA{0x12, 0x30, 0x58, 0xff}, draw.CircleGlyph{}},
		{"charge_record", "s-cap-charge", "▲ from a charge record", inkTeal, draw.TriangleGlyph{}},
		{"capacity_test", "s-cap-test", "■ from a capacity test", inkPlum, draw.SquareGlyph{}},
	}
	for _, s := range sources {
		xy := plotter.XYs{}
		for _, p := range pv.Capacity {
			if p.Source == s.source {
				xy = append(xy, plotter.XY{X: p.Cycle, Y: p.CapacityMah})
				yMin, yMax = math.Min(yMin, p.CapacityMah), math.Max(yMax, p.CapacityMah)
				xMax = math.Max(xMax, p.Cycle)
			}
		}
		if len(xy) > 0 {
			b.p.Add(scatter(xy, b.series("pt "+s.class, s.label, s.c), s.shape, 3))
		}
	}
	eol := b.series("s-eol", fmt.Sprintf("end of life: %.0f %% of rated", 100*threshold/pv.RatedMah), inkCrimson)
	b.p.Add(polyline(plotter.XYs{{X: 0, Y: threshold}, {X: xMax, Y: threshold}}, eol, 1.5, 6, 3))
	b.label(0, threshold, fmt.Sprintf("end of life %.0f mAh", threshold), inkCrimson, 4)
	b.crossingLine(pv.Forecast, yMin, yMax)
	b.p.X.Min, b.p.X.Max = 0, xMax*1.02
	pad := (yMax - yMin) * 0.06
	b.p.Y.Min, b.p.Y.Max = yMin-pad, yMax+pad
	return b.render("capacity", "Capacity against equivalent full cycles", crossingCaption(pv.Forecast, "the end-of-life line"), chartW, chartH)
}

// PackResistanceChart draws the rise of a pack's DC resistance over its
// baseline against cycles, with its forecast curve and band, and the watch
// and retire lines.
func PackResistanceChart(pv *health.PackView) (Chart, error) {
	rv := pv.Resistance
	b := newPlot("equivalent full cycles", "resistance rise over baseline (%)")
	xMax, yMin, yMax := b.forecastBand(rv.Forecast, "fitted rise")
	xMax = math.Max(xMax, 1)
	yMin, yMax = math.Min(yMin, 0), math.Max(yMax, pv.Thresholds.WatchIRRisePct)
	xy := plotter.XYs{}
	for _, p := range rv.Series {
		rise := 100 * (p.Value - rv.BaselineMOhm) / rv.BaselineMOhm
		xy = append(xy, plotter.XY{X: p.Cycle, Y: rise})
		xMax, yMin, yMax = math.Max(xMax, p.Cycle), math.Min(yMin, rise), math.Max(yMax, rise)
	}
	b.p.Add(scatter(xy, b.series("pt s-ir", "● a reading (flight or check)", inkRust), draw.CircleGlyph{}, 2.5))
	watch := pv.Thresholds.WatchIRRisePct
	b.p.Add(polyline(plotter.XYs{{X: 0, Y: watch}, {X: xMax, Y: watch}}, b.series("s-limit", "watch from here", inkOchre), 1.5, 6, 3))
	b.label(0, watch, fmt.Sprintf("watch at +%.0f %%", watch), inkOchre, 4)
	if retire := pv.Thresholds.RetireIRRisePct; retire <= yMax*1.2 {
		b.p.Add(polyline(plotter.XYs{{X: 0, Y: retire}, {X: xMax, Y: retire}}, b.series("s-eol", "retire from here", inkCrimson), 1.5, 6, 3))
		b.label(0, retire, fmt.Sprintf("retire at +%.0f %%", retire), inkCrimson, 4)
		yMax = math.Max(yMax, retire)
	}
	b.crossingLine(rv.Forecast, yMin, yMax)
	b.p.X.Min, b.p.X.Max = 0, xMax*1.02
	b.p.Y.Min, b.p.Y.Max = yMin-5, yMax+5
	caption := fmt.Sprintf("Baseline %.1f mΩ; now %.1f mΩ (%+.0f %%). ", rv.BaselineMOhm, rv.CurrentMOhm, rv.RisePct) +
		crossingCaption(rv.Forecast, "the retire line")
	return b.render("resistance", "Resistance rise against cycles", caption, chartW, chartH)
}

// BearingChart draws a motor's bearing life consumed over time, with the
// projection to the end of rated life at its recent duty.
func BearingChart(mv *health.MotorView, now time.Time) (Chart, error) {
	b := newPlot("date", "bearing life consumed (%)")
	xy := plotter.XYs{}
	for _, p := range mv.Series {
		xy = append(xy, plotter.XY{X: unix(p.At), Y: 100 * p.Value})
	}
	xMin, xMax := unix(now), unix(now)
	if len(xy) > 0 {
		xMin = xy[0].X
		b.p.Add(polyline(xy, b.series("s-bearing", "consumed (Palmgren–Miner sum)", inkBlue), 2))
		b.p.Add(scatter(xy, b.series("pt s-point", "", color.RGBA{0x12, 0x30, 0x58, 0xff}), draw.CircleGlyph{}, 1.8))
	}
	yMax := 100.0
	caption := "No forecast: the motor has no recent use to project."
	if mv.ForecastDate != nil {
		f := unix(*mv.ForecastDate)
		proj := plotter.XYs{{X: unix(now), Y: 100 * mv.ConsumedFraction}, {X: f, Y: 100}}
		b.p.Add(polyline(proj, b.series("s-forecast", "projection at recent duty", inkOchre), 2, 5, 3))
		xMax = math.Max(xMax, f)
		b.label(f, 100, "end of rated life "+mv.ForecastDate.UTC().Format("2006-01-02"), inkOchre, -4)
		caption = fmt.Sprintf("%.0f %% used; at the last 30 days' duty (%.2f h a day) the rated life is used up on %s.",
			100*mv.ConsumedFraction, mv.UtilisationHoursPerDay, mv.ForecastDate.UTC().Format("2006-01-02"))
	}
	b.p.Add(polyline(plotter.XYs{{X: xMin, Y: 100}, {X: xMax, Y: 100}}, b.series("s-limit", "rated life (100 %)", inkCrimson), 1.5, 6, 3))
	b.p.Y.Min, b.p.Y.Max = 0, math.Max(yMax, 100*mv.ConsumedFraction)*1.08
	b.p.X.Min, b.p.X.Max = xMin, xMax+(xMax-xMin)*0.03+1
	b.dateAxis(b.p.X.Min, b.p.X.Max)
	return b.render("bearing", "Bearing life consumed over time", caption, chartW, chartH)
}

// SpectrumChart draws a motor's load spectrum: turning time per rpm bin.
func SpectrumChart(mv *health.MotorView) (Chart, error) {
	b := newPlot("rotor speed (rev/min)", "time turning (h)")
	h := &plotter.Histogram{FillColor: b.series("s-spectrum", "time in each speed band", barFill),
		LineStyle: draw.LineStyle{Color: color.White, Width: vg.Points(0.5)}}
	total := 0.0
	for _, s := range mv.Spectrum {
		h.Bins = append(h.Bins, plotter.HistogramBin{Min: s.RPMLo, Max: s.RPMHi, Weight: s.Seconds / 3600})
		total += s.Seconds
	}
	if len(h.Bins) > 0 {
		h.Width = h.Bins[0].Max - h.Bins[0].Min
		b.p.Add(h)
	}
	caption := fmt.Sprintf("%.1f hours turning over %d logged flights while fitted.", total/3600, mv.Flights)
	return b.render("spectrum", "Load spectrum", caption, chartW, chartH)
}

// TrendChart draws one airframe figure (efficiency index or vibration) over
// its recent flights with the robust trend fitted to them.
func TrendChart(id, title, yLabel string, series []store.TrendPoint, value func(store.TrendPoint) *float64,
	tv *health.TrendView, limitPct float64) (Chart, error) {
	b := newPlot("flight date", yLabel)
	xy := plotter.XYs{}
	for _, p := range series {
		if v := value(p); v != nil {
			xy = append(xy, plotter.XY{X: unix(p.TakeoffAt), Y: *v})
		}
	}
	if len(xy) > 0 {
		b.p.Add(scatter(xy, b.series("pt s-point", "● one flight", inkBlue), draw.CircleGlyph{}, 2.5))
		b.dateAxis(xy[0].X, xy[len(xy)-1].X)
	}
	// Figures that vary in the third digit need labels that show it.
	b.p.Y.Tick.Marker = plot.TickerFunc(func(min, max float64) []plot.Tick {
		ticks := plot.DefaultTicks{}.Ticks(min, max)
		for i := range ticks {
			if ticks[i].Label != "" {
				ticks[i].Label = strconv.FormatFloat(ticks[i].Value, 'g', 5, 64)
			}
		}
		return ticks
	})
	caption := "Too few logged flights for a trend (it needs five)."
	if tv != nil && len(xy) >= tv.N && tv.N > 1 {
		// The trend is fitted over the window's flights by their place in it.
		win := xy[len(xy)-tv.N:]
		line := plotter.XYs{}
		for i, p := range win {
			line = append(line, plotter.XY{X: p.X, Y: tv.Intercept + tv.Slope*float64(i)})
		}
		b.p.Add(polyline(line, b.series("s-trend", "robust trend (Theil–Sen)", inkRust), 2))
		flag := "within"
		if tv.Flag {
			flag = "beyond"
		}
		caption = fmt.Sprintf("Over the last %d flights: %+.1f %% (%s the %.0f %% limit).", tv.N, tv.RisePct, flag, limitPct)
	}
	return b.render(id, title, caption, chartW, 240)
}

// PlanChart draws how many items fall due each week of the horizon (the
// first bar holds what is overdue now), grounding items apart.
func PlanChart(thisWeek time.Time, days int, overdue []PlanItem, weeks []PlanWeek) (Chart, error) {
	b := newPlot("week starting", "items falling due")
	n := days/7 + 2
	ground := make(plotter.Values, n)
	other := make(plotter.Values, n)
	count := func(i int, items []PlanItem) {
		for _, it := range items {
			if it.Grounding {
				ground[i]++
			} else {
				other[i]++
			}
		}
	}
	count(0, overdue)
	for _, w := range weeks {
		i := int(w.Start.Sub(thisWeek).Hours()/(24*7)) + 1
		if i >= 1 && i < n {
			count(i, w.Items)
		}
	}
	names := make([]string, n)
	names[0] = "overdue"
	step := max(1, n/8) // keep the tick labels apart
	for i := 1; i < n; i++ {
		if (i-1)%step == 0 {
			names[i] = thisWeek.AddDate(0, 0, 7*(i-1)).Format("Jan 2")
		}
	}
	w := vg.Points(float64(chartW-80) / float64(n) * 0.8)
	gb, err := plotter.NewBarChart(ground, w)
	if err != nil {
		return Chart{}, err
	}
	gb.Color = b.series("s-ground", "items that ground an airframe when overdue", inkCrimson)
	gb.LineStyle.Width = 0
	ob, err := plotter.NewBarChart(other, w)
	if err != nil {
		return Chart{}, err
	}
	ob.Color = b.series("s-due", "other items", inkBlue)
	ob.LineStyle.Width = 0
	ob.StackOn(gb)
	b.p.Add(gb, ob)
	b.p.NominalX(names...)
	b.p.Y.Min = 0
	return b.render("plan-weeks", "Items falling due by week", "Bars stack grounding items (below) and the rest.", chartW, 220)
}
