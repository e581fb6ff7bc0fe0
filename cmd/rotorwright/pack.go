package main

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"github.com/rotorwright/rotorwright/wear"
)

// packForecastOptions are the options of `rotorwright pack forecast`.
type packForecastOptions struct {
	RatedMah  float64
	EndOfLife float64  // fraction of rated capacity, e.g. 0.8
	FitTo     *float64 // fit the rows up to this cycle; nil: all rows
	JSON      bool
}

// packForecastJSON is the exact --json output.
type packForecastJSON struct {
	Model     string      `json:"model"`
	FitPoints int         `json:"fit_points"`
	Sustained *float64    `json:"sustained_crossing_cycle"`
	Interval  [2]*float64 `json:"interval"`
	Level     float64     `json:"level"`
	Reason    *string     `json:"reason"`
}

// packForecast reads a capacity history (CSV with a cycle column and
// capacity_mah or capacity_ah; other columns are ignored, as a cycler or
// charger exports them), forecasts where capacity falls to the end-of-life
// fraction of rated and prints the chosen model, its backtest error, the
// forecast sustained crossing and its interval on out.
func packForecast(in io.Reader, name string, o packForecastOptions, out io.Writer) error {
	pts, unit, err := readCapacityCSV(in, name)
	if err != nil {
		return err
	}
	if o.FitTo != nil {
		kept := pts[:0]
		for _, p := range pts {
			if p.Cycle <= *o.FitTo {
				kept = append(kept, p)
			}
		}
		pts = kept
	}
	f, err := wear.CapacityForecast(pts, o.RatedMah, o.EndOfLife)
	if err != nil {
		return err
	}
	if o.JSON {
		j := packForecastJSON{Model: f.Model, FitPoints: f.Points, Sustained: f.FittedSustained,
			Interval: [2]*float64{f.IntervalFrom, f.IntervalTo}, Level: f.Level}
		if j.Model == "" {
			j.Model = "none"
		}
		if f.FittedSustained == nil {
			j.Reason = &f.Reason
		}
		return json.NewEncoder(out).Encode(j)
	}
	fmt.Fprintf(out, "%s: %d rows fitted", name, f.Points)
	if f.Points > 0 {
		fmt.Fprintf(out, " (cycles %g to %g)", f.FirstCycle, f.LastCycle)
	}
	fmt.Fprintf(out, ", capacity read from %s\n", unit)
	fmt.Fprintf(out, "end of life:      %.0f mAh (%g %% of rated %.0f mAh)\n", f.Threshold, 100*o.EndOfLife, o.RatedMah)
	if f.Model != "" {
		fmt.Fprintf(out, "model:            %s (%s)\n", f.Model, f.Source)
		fmt.Fprintf(out, "backtest error:   %.1f mAh mean absolute, over origins at %v points\n", f.BacktestMAE, f.Origins)
		for _, c := range f.Candidates {
			switch {
			case c.Dropped != "":
				fmt.Fprintf(out, "  %-11s dropped: %s\n", c.Model, c.Dropped)
			default:
				fmt.Fprintf(out, "  %-11s backtest %.1f mAh\n", c.Model, *c.BacktestMAE)
			}
		}
	}
	if f.ObservedSustained != nil {
		fmt.Fprintf(out, "observed:         below end of life for good from cycle %g (first below at %g)\n", *f.ObservedSustained, *f.ObservedFirst)
	}
	if f.FittedSustained == nil {
		fmt.Fprintf(out, "no forecast:      %s\n", f.Reason)
		return nil
	}
	fmt.Fprintf(out, "forecast:         capacity below end of life for good from cycle %g", *f.FittedSustained)
	if f.FittedFirst != nil && *f.FittedFirst != *f.FittedSustained {
		fmt.Fprintf(out, " (first below at %g)", *f.FittedFirst)
	}
	fmt.Fprintf(out, "\n%-18scycles %s to %s (models %s)\n", fmt.Sprintf("%.0f %% interval:", 100*f.Level),
		cycleText(f.IntervalFrom), cycleText(f.IntervalTo), strings.Join(f.Plausible, ", "))
	fmt.Fprintf(out, "method:           %s\n", f.Method)
	return nil
}

func cycleText(c *float64) string {
	if c == nil {
		return "beyond the horizon"
	}
	return strconv.FormatFloat(*c, 'f', -1, 64)
}

// readCapacityCSV reads (cycle, capacity in mAh) rows. The header must name
// cycle and one of capacity_mah or capacity_ah; errors name the line and
// column.
func readCapacityCSV(in io.Reader, name string) ([]wear.TrendPoint, string, error) {
	r := csv.NewReader(in)
	r.FieldsPerRecord = -1
	r.TrimLeadingSpace = true
	header, err := r.Read()
	if err == io.EOF {
		return nil, "", fmt.Errorf("%s: empty file, want a header with cycle and capacity_mah or capacity_ah", name)
	} else if err != nil {
		return nil, "", fmt.Errorf("%s: %w", name, err)
	}
	col := map[string]int{}
	for i, h := range header {
		h = strings.ToLower(strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")))
		if _, dup := col[h]; !dup {
			col[h] = i
		}
	}
	cyc, ok := col["cycle"]
	if !ok {
		return nil, "", fmt.Errorf("%s line 1: no cycle column (header %v)", name, header)
	}
	capCol, scale, unit := 0, 1.0, "capacity_mah"
	mah, hasMah := col["capacity_mah"]
	ah, hasAh := col["capacity_ah"]
	switch {
	case hasMah && hasAh:
		return nil, "", fmt.Errorf("%s line 1: both capacity_mah and capacity_ah; keep one", name)
	case hasMah:
		capCol = mah
	case hasAh:
		capCol, scale, unit = ah, 1000, "capacity_ah (x 1000)"
	default:
		return nil, "", fmt.Errorf("%s line 1: no capacity_mah or capacity_ah column (header %v)", name, header)
	}
	var pts []wear.TrendPoint
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		line, _ := r.FieldPos(0)
		if err != nil {
			return nil, "", fmt.Errorf("%s: %w", name, err)
		}
		num := func(i int, what string) (float64, error) {
			if i >= len(rec) {
				return 0, fmt.Errorf("%s line %d: no %s value (the row has %d fields)", name, line, what, len(rec))
			}
			v, err := strconv.ParseFloat(strings.TrimSpace(rec[i]), 64)
			if err != nil || v != v || v > 1e12 || v < -1e12 {
				_, column := r.FieldPos(i)
				return 0, fmt.Errorf("%s line %d column %d: %s %q is not a number", name, line, column, what, rec[i])
			}
			return v, nil
		}
		c, err := num(cyc, "cycle")
		if err != nil {
			return nil, "", err
		}
		q, err := num(capCol, unit)
		if err != nil {
			return nil, "", err
		}
		pts = append(pts, wear.TrendPoint{Cycle: c, Value: q * scale})
	}
	return pts, unit, nil
}

func (c *cli) packCmd() *cobra.Command {
	var o packForecastOptions
	var fitTo float64
	forecast := &cobra.Command{
		Use:   "forecast FILE.csv --rated MAH --end-of-life FRACTION [--fit-to CYCLE] [--json]",
		Short: "Forecast a pack's end of life from a capacity history (bench data)",
		Long: `Forecast where a pack's capacity falls for good below a fraction of its rating,
from a CSV with a cycle column and capacity_mah (or capacity_ah); other columns
are ignored, as a cycler or charger exports them. Prints the model chosen by
how well each candidate would have forecast the pack's own past, its backtest
error, the forecast sustained crossing and its 95 % interval; --json prints
{"model", "fit_points", "sustained_crossing_cycle", "interval", "level", "reason"}.

Decision support only: retire packs by the maker's limits and your maintenance
programme; a swollen or damaged lithium pack is retired at once, never charged.`,
		Args: func(_ *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usagef("forecast takes one CSV file, got %d arguments", len(args))
			}
			return nil
		},
		PreRunE: func(cmd *cobra.Command, _ []string) error {
			if !(o.RatedMah > 0) {
				return usagef("--rated must be a positive capacity in mAh")
			}
			if !(o.EndOfLife > 0 && o.EndOfLife < 1) {
				return usagef("--end-of-life must be a fraction between 0 and 1, e.g. 0.8")
			}
			if cmd.Flags().Changed("fit-to") {
				o.FitTo = &fitTo
			}
			return nil
		},
		RunE: func(_ *cobra.Command, args []string) error {
			f, err := os.Open(args[0])
			if err != nil {
				return err
			}
			defer f.Close()
			return packForecast(f, args[0], o, c.stdout)
		},
	}
	forecast.Flags().Float64Var(&o.RatedMah, "rated", 0, "rated capacity, mAh (required)")
	forecast.Flags().Float64Var(&o.EndOfLife, "end-of-life", 0, "end of life as a fraction of rated, e.g. 0.8 (required)")
	forecast.Flags().Float64Var(&fitTo, "fit-to", 0, "fit only the rows up to this cycle (default: all)")
	forecast.Flags().BoolVar(&o.JSON, "json", false, "print the result as JSON")
	return group("pack", "Pack tools that need no database", forecast)
}
