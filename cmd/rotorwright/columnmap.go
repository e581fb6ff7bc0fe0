package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"maps"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/telemetry"
)

// columnMapCheckOptions are the options of `rotorwright column-map check`.
type columnMapCheckOptions struct {
	File    string // the log to read (.gz or gzip content: decompressed)
	Map     string // a stored map's name or id, or "native"; empty: detect
	MapFile string // a draft map in a JSON file, read through instead of a stored one
	Rows    int    // data rows to print
}

// errLogRefused makes the command exit non-zero after printing the refusal.
var errLogRefused = errors.New("the log is refused")

// columnMapCheck reads a log file as an upload would be read, with the
// stored maps (or a draft one), and says on out which map it is read
// through and why, how the columns map, the first rows as the service
// reads them, and the refusal if there is one.
func columnMapCheck(o columnMapCheckOptions, stored []*fleet.ColumnMap, out io.Writer) error {
	raw, err := os.ReadFile(o.File)
	if err != nil {
		return err
	}
	var pick ingest.Picker
	switch {
	case o.MapFile != "":
		m, err := draftMap(o.MapFile, stored, out)
		if err != nil {
			return err
		}
		pick = func([]byte) (*fleet.ColumnMap, error) { return m, nil }
	case o.Map != "":
		pick = func([]byte) (*fleet.ColumnMap, error) { return namedMap(o.Map, stored) }
	default:
		pick = func(head []byte) (*fleet.ColumnMap, error) {
			m, err := ingest.Pick(head, stored)
			if err == nil && m != nil {
				fmt.Fprintf(out, "detected: the header holds every detect name of %q (%s)\n", m.Name, strings.Join(m.Detect, ", "))
			} else if err == nil {
				fmt.Fprintf(out, "detected: no column map's detect names are all in the header (%d maps stored); reading the native layout\n", len(stored))
			}
			return m, err
		}
	}
	gz := strings.HasSuffix(strings.ToLower(o.File), ".gz")
	rd, err := ingest.ReadLog(raw, gz, telemetry.Limits{}, pick)
	if err != nil {
		if fleet.ErrorCode(err) == fleet.EINTERNAL {
			return err
		}
		fmt.Fprintf(out, "refused: %s\n", reason(err))
		return errLogRefused
	}
	describeReading(rd, o.Rows, out)
	return nil
}

// draftMap reads and validates a map from a JSON file as creation would,
// and warns of stored maps auto-detection could not tell it from.
func draftMap(path string, stored []*fleet.ColumnMap, out io.Writer) (*fleet.ColumnMap, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var m fleet.ColumnMap
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&m); err != nil {
		return nil, fmt.Errorf("%s: %s", path, reason(err))
	}
	if err := m.Validate(); err != nil {
		return nil, fmt.Errorf("%s would be refused: %s", path, reason(err))
	}
	for _, o := range stored {
		if o.Name != m.Name && m.DetectClash(o) {
			fmt.Fprintf(out, "warning: creating %q would be refused: auto-detection could not tell it from the stored map %q\n", m.Name, o.Name)
		}
	}
	return &m, nil
}

// namedMap finds a stored map by name or id ("native": none).
func namedMap(ref string, stored []*fleet.ColumnMap) (*fleet.ColumnMap, error) {
	if strings.EqualFold(ref, fleet.NativeLayout) {
		return nil, nil
	}
	for _, m := range stored {
		if m.Name == ref || m.ID == ref {
			return m, nil
		}
	}
	return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "column_map", Message: fmt.Sprintf("no column map has the name or id %q", ref)}
}

// describeReading prints how a log was read and its first rows.
func describeReading(rd *ingest.Reading, rows int, out io.Writer) {
	l, m := rd.Log, rd.Map
	if m == nil {
		fmt.Fprintln(out, "layout: native (the service's own columns)")
	} else {
		fmt.Fprintf(out, "layout: column map %q version %d (delimiter %q, header on line %d)\n", m.Name, m.Version, m.Delimiter, m.HeaderRow)
		fmt.Fprintf(out, "  t_s <- %s (%s)\n", m.Time.Column, timeText(m.Time))
		for _, t := range l.Columns {
			if s, ok := m.Columns[t]; ok {
				fmt.Fprintf(out, "  %s <- %s%s\n", t, s.From, conversionText(s))
			}
		}
		var absent []string
		for _, t := range m.Targets() {
			if l.Series(t) == nil {
				absent = append(absent, m.Columns[t].From+" ("+t+")")
			}
		}
		if len(absent) > 0 {
			fmt.Fprintf(out, "  not in the header, so absent: %s\n", strings.Join(absent, ", "))
		}
	}
	if len(l.Unknown) > 0 {
		fmt.Fprintf(out, "ignored columns: %s\n", strings.Join(l.Unknown, ", "))
	}
	if len(l.Blank) > 0 {
		var bs []string
		for _, c := range slices.Sorted(maps.Keys(l.Blank)) {
			note := ""
			if l.Blank[c] == l.Rows {
				note = ", every row: taken as absent"
			}
			bs = append(bs, fmt.Sprintf("%s %d%s", c, l.Blank[c], note))
		}
		fmt.Fprintf(out, "blank cells (no reading): %s\n", strings.Join(bs, "; "))
	}
	if l.Meta.Start != nil {
		fmt.Fprintf(out, "start: %s\n", l.Meta.Start.UTC().Format("2006-01-02T15:04:05.999999999Z07:00"))
	}
	gz := ""
	if rd.Gzip {
		gz = ", gzip-compressed"
	}
	fmt.Fprintf(out, "accepted: %d rows, %d bytes of text%s, %.1f s\n", l.Rows, rd.Bytes, gz, l.T[l.Rows-1]-l.T[0])
	n := min(rows, l.Rows)
	if n <= 0 {
		return
	}
	fmt.Fprintf(out, "first %d rows as the service reads them:\n", n)
	tw := tabwriter.NewWriter(out, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, strings.Join(l.Columns, "\t")+"\t")
	for i := range n {
		vals := make([]string, len(l.Columns))
		for j, c := range l.Columns {
			if v := l.Series(c)[i]; !math.IsNaN(v) { // a blank cell stays blank
				vals[j] = strconv.FormatFloat(v, 'g', 10, 64)
			}
		}
		fmt.Fprintln(tw, strings.Join(vals, "\t")+"\t")
	}
	tw.Flush()
}

func timeText(t fleet.MapTime) string {
	switch t.Origin {
	case fleet.OriginEpoch:
		return t.Unit + " of Unix time; the flight starts at the first sample"
	case fleet.OriginRFC3339:
		return "RFC 3339 time per row; the flight starts at the first sample"
	}
	return t.Unit + " since the log's start"
}

func conversionText(s fleet.MapSource) string {
	var parts []string
	if s.Negate {
		parts = append(parts, "negated")
	}
	if s.Scale != nil && *s.Scale != 1 {
		parts = append(parts, "x "+strconv.FormatFloat(*s.Scale, 'g', -1, 64))
	}
	if s.Offset != 0 {
		parts = append(parts, "+ "+strconv.FormatFloat(s.Offset, 'g', -1, 64))
	}
	if len(parts) == 0 {
		return ""
	}
	return " (" + strings.Join(parts, ", ") + ")"
}

func (c *cli) columnMapCmd() *cobra.Command {
	var o columnMapCheckOptions
	check := &cobra.Command{
		Use:   "check FILE",
		Short: "Read a log file as an upload would be read: which map, how the columns map, the first rows, any refusal",
		Long: `Read a flight log file as an upload of it would be read, and say which column map
it is read through (the one named, a draft from --map-file, or the one the header
selects by its detect names), how each column maps, the first rows as the service
reads them, and the refusal with its line and column if the log is refused. The
tool a technician uses to set a map up: nothing is stored. A .gz file is
decompressed. Exits 1 when the log (or the draft map) is refused.`,
		Args: func(_ *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usagef("check takes one log file, got %d arguments", len(args))
			}
			return nil
		},
		PreRunE: func(*cobra.Command, []string) error {
			if o.Map != "" && o.MapFile != "" {
				return usagef("give --column-map or --map-file, not both")
			}
			return nil
		},
	}
	check.Flags().StringVar(&o.Map, "column-map", "", "read through this stored map (name or id; native for the service's own layout)")
	check.Flags().StringVar(&o.MapFile, "map-file", "", "read through the column map in this JSON file (as POST /v1/column-maps takes it)")
	check.Flags().IntVar(&o.Rows, "rows", 5, "data rows to print")
	return group("column-map", "Set up and check column maps (foreign log layouts)", c.tool(check,
		func(ctx context.Context, app *App, args []string) error {
			o.File = args[0]
			maps, err := app.DB.ColumnMaps(ctx)
			if err != nil {
				return err
			}
			return columnMapCheck(o, maps, app.out)
		}))
}

// logFiles lists the logs of an import folder: *.csv and *.csv.gz.
func logFiles(dir string) ([]string, error) {
	var files []string
	for _, pat := range []string{"*.csv", "*.csv.gz"} {
		m, err := filepath.Glob(filepath.Join(dir, pat))
		if err != nil {
			return nil, err
		}
		files = append(files, m...)
	}
	return files, nil
}
