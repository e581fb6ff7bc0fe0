package web

import (
	"fmt"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/wear"
)

// A pack chart as the page inlines it: no style attribute (the policy
// allows no inline style), one classed mark per capacity estimate, the
// end-of-life line and its label, an accessible name.
func TestPackCapacityChartMarks(t *testing.T) {
	pv := &health.PackView{RatedMah: 10000, Cycles: 190, Thresholds: wear.DefaultPackThresholds()}
	// A straight fade of 12 mAh a cycle, with a little noise, to 8000 mAh.
	var pts []wear.TrendPoint
	for i := 0; i < 20; i++ {
		x := float64(10 * i)
		pv.Capacity = append(pv.Capacity, health.CapacityPoint{Cycle: x, CapacityMah: 10000 - 12*x + float64(i%3*5),
			Source: []string{"flight_rest_voltages", "charge_record", "capacity_test"}[i%3]})
		pts = append(pts, wear.TrendPoint{Cycle: x, Value: pv.Capacity[i].CapacityMah})
	}
	fc, err := wear.Forecast(pts, wear.ForecastSettings{Threshold: 8000})
	if err != nil || fc.FittedSustained == nil {
		t.Fatalf("forecast %+v: %v", fc, err)
	}
	date := time.Date(2027, 3, 1, 0, 0, 0, 0, time.UTC)
	pv.Forecast = &health.ForecastView{TrendForecast: fc, Date: &date}
	for x := 0.0; x <= 200; x += 10 {
		lo, hi := fc.Bounds(x)
		pv.Forecast.Curve = append(pv.Forecast.Curve, health.CurvePoint{Cycle: x, Value: fc.Predict(x), Lo: lo, Hi: hi})
	}
	cross := fmt.Sprintf("cycle %.0f · 2027-03-01", *fc.FittedSustained)
	c, err := PackCapacityChart(pv)
	if err != nil {
		t.Fatal(err)
	}
	svg := string(c.SVG)
	if strings.Contains(svg, " style=") || strings.Contains(svg, "<?xml") {
		t.Error("inline SVG keeps style attributes or its XML prolog")
	}
	if n := strings.Count(svg, `class="pt `); n != len(pv.Capacity) {
		t.Errorf("%d point marks, want %d", n, len(pv.Capacity))
	}
	for _, class := range []string{"s-eol", "s-fit", "s-band", "s-cross"} {
		if strings.Count(svg, `class="`+class+`"`) != 1 {
			t.Errorf("want one %s mark", class)
		}
	}
	for _, text := range []string{"end of life 8000 mAh", cross, "equivalent full cycles", "capacity (mAh)"} {
		if !strings.Contains(svg, text) {
			t.Errorf("chart lacks the text %q", text)
		}
	}
	if !regexp.MustCompile(`<svg class="chart" role="img" aria-labelledby="capacity-t"`).MatchString(svg) ||
		!strings.Contains(svg, `<title id="capacity-t">`) {
		t.Error("chart has no accessible name")
	}
	if len(c.Legend) < 5 {
		t.Errorf("legend %v", c.Legend)
	}
}

// The top view puts every position on the drawing with its part serials.
func TestTopViewLabels(t *testing.T) {
	pos := []PositionView{
		{Label: "m1", Rotation: "ccw", ArmDeg: 45, Motor: &Gauge{Serial: "MOT-1", Fraction: 0.4, Text: "bearing 40 %", Level: "go"},
			Prop: &Gauge{Serial: "PR-1", Fraction: 1, Text: "replace", Level: "stop"}},
		{Label: "m2", Rotation: "cw", ArmDeg: 135},
	}
	c, err := TopView("tv", "a quad from above", pos)
	if err != nil {
		t.Fatal(err)
	}
	svg := string(c.SVG)
	for _, want := range []string{">m1<", ">m2<", ">MOT-1<", ">PR-1<", ">no motor<", ">no prop<", ">FWD<", ">ccw<", ">cw<"} {
		if !strings.Contains(svg, want) {
			t.Errorf("top view lacks %s", want)
		}
	}
	if strings.Contains(svg, " style=") {
		t.Error("top view keeps style attributes")
	}
	// The callouts (serials, gauges) are one group the style sheet can hide
	// on a phone; the discs and their labels are outside it.
	_, callouts, ok := strings.Cut(svg, `<g class="callouts"`)
	if !ok || strings.Count(svg, `class="callouts"`) != 1 {
		t.Fatal("top view has no one callouts group")
	}
	for _, want := range []string{">MOT-1<", ">PR-1<", ">no motor<", ">bearing 40 %<"} {
		if !strings.Contains(callouts, want) {
			t.Errorf("%s is not in the callouts group", want)
		}
	}
	if before, _, _ := strings.Cut(svg, `<g class="callouts"`); !strings.Contains(before, ">m1<") || !strings.Contains(before, ">FWD<") {
		t.Error("the position labels are not drawn before the callouts")
	}
}
