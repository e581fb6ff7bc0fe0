package sim

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"strings"
	"time"
)

// LogLayout is an invented foreign log layout the simulator can write, with
// the column map (JSON, as POST /v1/column-maps takes it) that reads it
// back. The layouts are ours, made up to exercise the mapped reader; they
// copy no real logger's format.
type LogLayout struct {
	Name string
	// Map is the column map that reads the layout; its rotor and cell
	// sources cover up to MaxLayoutRotors and MaxLayoutCells.
	Map []byte
	// delim, bom, crlf, quote and preamble shape the text; tcol is the time
	// column, written by time; cols names and converts every other column.
	delim            string
	bom, crlf, quote bool
	preamble         []string
	tcol             string
	time             func(tS string, start time.Time) (string, error)
	cols             func(native string) (name string, conv func(string) (string, error))
}

// Limits of the layouts' column maps.
const (
	MaxLayoutRotors = 8
	MaxLayoutCells  = 12
)

// LogLayouts returns the three invented foreign layouts:
//
//   - "epoch-us": comma-separated; absolute Unix time in microseconds;
//     volts in mV, amps in cA, pressure in hPa, degrees in 1e-7.
//   - "elapsed-ms": a UTF-8 byte-order mark, two preamble lines, then a
//     header; ';'-separated, every field quoted, CRLF line ends, blank lines;
//     milliseconds since the log's start; a text column whose values hold
//     the delimiter, doubled quotes and (once) a line break.
//   - "utc-text": tab-separated; an RFC 3339 time per row; temperature in
//     degrees Fahrenheit; current negative while discharging; pressure in kPa.
func LogLayouts() []LogLayout {
	return []LogLayout{epochLayout(), elapsedLayout(), utcLayout()}
}

// WriteLayout simulates spec and writes its log in layout l.
func WriteLayout(spec FlightSpec, l LogLayout, w io.Writer) (Truth, error) {
	var native bytes.Buffer
	tr, err := Generate(spec, &native)
	if err != nil {
		return Truth{}, err
	}
	return tr, l.Rewrite(native.Bytes(), w)
}

// Rewrite writes a native log again in layout l, as the simulator would,
// field by field on the decimal text (a change of unit moves the decimal
// point; Fahrenheit and negation are exact decimal arithmetic), so the
// layout carries exactly the native log's information. A blank cell stays
// blank (a quoted layout writes it "").
func (l LogLayout) Rewrite(native []byte, w io.Writer) error {
	bw := bufio.NewWriterSize(w, 64<<10)
	eol := "\n"
	if l.crlf {
		eol = "\r\n"
	}
	if l.bom {
		bw.WriteString("\xEF\xBB\xBF")
	}
	for _, p := range l.preamble {
		bw.WriteString(p + eol)
	}
	var start time.Time
	var convs []func(string) (string, error)
	var keep []int
	row := 0
	sc := bufio.NewScanner(bytes.NewReader(native))
	sc.Buffer(make([]byte, 64<<10), 1<<20)
	fields := make([]string, 0, 64)
	for sc.Scan() {
		line := sc.Text()
		if v, ok := strings.CutPrefix(line, "# start:"); ok {
			t, err := time.Parse(time.RFC3339Nano, strings.TrimSpace(v))
			if err != nil {
				return err
			}
			start = t
			continue
		}
		if line == "" || line[0] == '#' {
			continue
		}
		in := strings.Split(line, ",")
		fields = fields[:0]
		if convs == nil {
			for i, n := range in {
				name, conv := l.cols(n)
				if n == "t_s" {
					name, conv = l.tcol, nil
				}
				if name == "" {
					continue
				}
				keep = append(keep, i)
				convs = append(convs, conv)
				fields = append(fields, name)
			}
			if l.quote {
				fields = append(fields, "remark")
			}
		} else {
			for j, i := range keep {
				v := in[i]
				var err error
				if v == "" && convs[j] != nil {
					fields = append(fields, "") // a blank cell stays blank
					continue
				}
				if convs[j] == nil {
					v, err = l.time(v, start)
				} else {
					v, err = convs[j](v)
				}
				if err != nil {
					return fmt.Errorf("row %d, %s: %w", row+1, v, err)
				}
				fields = append(fields, v)
			}
			if l.quote {
				fields = append(fields, remark(row))
			}
			row++
		}
		for j, f := range fields {
			if j > 0 {
				bw.WriteString(l.delim)
			}
			if l.quote {
				f = `"` + strings.ReplaceAll(f, `"`, `""`) + `"`
			}
			bw.WriteString(f)
		}
		bw.WriteString(eol)
		if l.quote && row > 0 && row%1000 == 0 {
			bw.WriteString(eol) // a blank line now and then, as some exporters write
		}
	}
	if err := sc.Err(); err != nil {
		return err
	}
	return bw.Flush()
}

// remark is the free-text column of the quoted layout.
func remark(row int) string {
	switch {
	case row == 3:
		return "armed; checks \"ok\"\nsecond line"
	case row%500 == 0:
		return `mode "hold"; gps 3d`
	}
	return ""
}

// mapJSON builds a layout's column map: fixed targets, then rotors and cells
// named by the functions.
func mapJSON(name, delim string, headerRow int, tcol, unit, origin string, fixed map[string]map[string]any,
	rotor, cell func(int) map[string]any, detect []string) []byte {
	cols := map[string]any{}
	for t, s := range fixed {
		cols[t] = s
	}
	for i := 1; i <= MaxLayoutRotors; i++ {
		cols["rpm_m"+strconv.Itoa(i)] = rotor(i)
	}
	for i := 1; i <= MaxLayoutCells; i++ {
		cols["cell_"+strconv.Itoa(i)+"_v"] = cell(i)
	}
	tm := map[string]any{"column": tcol, "origin": origin}
	if unit != "" {
		tm["unit"] = unit
	}
	b, err := json.Marshal(map[string]any{"name": name, "delimiter": delim, "header_row": headerRow,
		"time": tm, "columns": cols, "detect": detect})
	if err != nil {
		panic(err)
	}
	return b
}

func src(from string, scale float64) map[string]any {
	if scale == 1 {
		return map[string]any{"from": from}
	}
	return map[string]any{"from": from, "scale": scale}
}

// nativeIndex reads rpm_m<i> and cell_<i>_v.
func nativeIndex(n, prefix, suffix string) (int, bool) {
	s, ok := strings.CutPrefix(n, prefix)
	if !ok {
		return 0, false
	}
	s, ok = strings.CutSuffix(s, suffix)
	if !ok {
		return 0, false
	}
	i, err := strconv.Atoi(s)
	return i, err == nil
}

func same(v string) (string, error) { return v, nil }

func shifter(k int) func(string) (string, error) {
	return func(v string) (string, error) { return shiftDecimal(v, k) }
}

func epochLayout() LogLayout {
	l := LogLayout{Name: "epoch-us", delim: ",", tcol: "clock_us"}
	l.Map = mapJSON("sim-epoch-us", ",", 1, "clock_us", "us", "epoch", map[string]map[string]any{
		"pack_v": src("vbus_mV", 0.001), "pack_a": src("ibus_cA", 0.01), "throttle": src("cmd_frac", 1),
		"baro_pa": src("static_hPa", 100), "temp_c": src("oat_C", 1),
		"acc_x": src("ax", 1), "acc_y": src("ay", 1), "acc_z": src("az", 1),
		"lat": src("lat_e7", 1e-7), "lon": src("lon_e7", 1e-7),
	}, func(i int) map[string]any { return src(fmt.Sprintf("rotor%d_rpm", i), 1) },
		func(i int) map[string]any { return src(fmt.Sprintf("cell%d_mV", i), 0.001) },
		[]string{"clock_us", "vbus_mV"})
	l.time = func(tS string, start time.Time) (string, error) {
		ns, err := decimalNS(tS)
		if err != nil {
			return "", err
		}
		return strconv.FormatInt(start.UnixMicro()+ns/1000, 10), nil
	}
	fixed := map[string]struct {
		name string
		k    int
	}{"pack_v": {"vbus_mV", 3}, "pack_a": {"ibus_cA", 2}, "throttle": {"cmd_frac", 0}, "baro_pa": {"static_hPa", -2},
		"temp_c": {"oat_C", 0}, "acc_x": {"ax", 0}, "acc_y": {"ay", 0}, "acc_z": {"az", 0}, "lat": {"lat_e7", 7}, "lon": {"lon_e7", 7}}
	l.cols = func(n string) (string, func(string) (string, error)) {
		if f, ok := fixed[n]; ok {
			return f.name, shifter(f.k)
		}
		if i, ok := nativeIndex(n, "rpm_m", ""); ok {
			return fmt.Sprintf("rotor%d_rpm", i), same
		}
		if i, ok := nativeIndex(n, "cell_", "_v"); ok {
			return fmt.Sprintf("cell%d_mV", i), shifter(3)
		}
		return "", nil
	}
	return l
}

func elapsedLayout() LogLayout {
	l := LogLayout{Name: "elapsed-ms", delim: ";", bom: true, crlf: true, quote: true, tcol: "elapsed_ms",
		preamble: []string{`"flight record export";"unit 7"`, ""}}
	l.Map = mapJSON("sim-elapsed-ms", ";", 3, "elapsed_ms", "ms", "start", map[string]map[string]any{
		"pack_v": src("batt V", 1), "pack_a": src("batt A", 1), "throttle": src("stick", 1),
		"baro_pa": src("pressure Pa", 1), "temp_c": src("air temp C", 1),
		"acc_x": src("acc fwd", 1), "acc_y": src("acc left", 1), "acc_z": src("acc up", 1),
		"lat": src("latitude", 1), "lon": src("longitude", 1),
	}, func(i int) map[string]any { return src(fmt.Sprintf("motor %d speed", i), 1) },
		func(i int) map[string]any { return src(fmt.Sprintf("cell %d V", i), 1) },
		[]string{"elapsed_ms", "batt V"})
	l.time = func(tS string, _ time.Time) (string, error) { return shiftDecimal(tS, 3) }
	fixed := map[string]string{"pack_v": "batt V", "pack_a": "batt A", "throttle": "stick", "baro_pa": "pressure Pa",
		"temp_c": "air temp C", "acc_x": "acc fwd", "acc_y": "acc left", "acc_z": "acc up", "lat": "latitude", "lon": "longitude"}
	l.cols = func(n string) (string, func(string) (string, error)) {
		if f, ok := fixed[n]; ok {
			return f, same
		}
		if i, ok := nativeIndex(n, "rpm_m", ""); ok {
			return fmt.Sprintf("motor %d speed", i), same
		}
		if i, ok := nativeIndex(n, "cell_", "_v"); ok {
			return fmt.Sprintf("cell %d V", i), same
		}
		return "", nil
	}
	return l
}

func utcLayout() LogLayout {
	l := LogLayout{Name: "utc-text", delim: "\t", tcol: "utc"}
	l.Map = mapJSON("sim-utc-text", "\t", 1, "utc", "", "rfc3339", map[string]map[string]any{
		"pack_v": src("pack_volts", 1), "pack_a": {"from": "amps_out", "negate": true}, "throttle": src("thr", 1),
		"baro_pa": src("baro_kPa", 1000), "temp_c": {"from": "oat_F", "scale": 5.0 / 9, "offset": -160.0 / 9},
		"acc_x": src("accx", 1), "acc_y": src("accy", 1), "acc_z": src("accz", 1),
		"lat": src("gps_lat", 1), "lon": src("gps_lon", 1),
	}, func(i int) map[string]any { return src(fmt.Sprintf("motor%d", i), 1) },
		func(i int) map[string]any { return src(fmt.Sprintf("cell%d", i), 1) },
		[]string{"utc", "amps_out"})
	l.time = func(tS string, start time.Time) (string, error) {
		ns, err := decimalNS(tS)
		if err != nil {
			return "", err
		}
		return start.Add(time.Duration(ns)).UTC().Format(time.RFC3339Nano), nil
	}
	fixed := map[string]struct {
		name string
		conv func(string) (string, error)
	}{"pack_v": {"pack_volts", same}, "pack_a": {"amps_out", negateDecimal}, "throttle": {"thr", same},
		"baro_pa": {"baro_kPa", shifter(-3)}, "temp_c": {"oat_F", fahrenheit}, "acc_x": {"accx", same},
		"acc_y": {"accy", same}, "acc_z": {"accz", same}, "lat": {"gps_lat", same}, "lon": {"gps_lon", same}}
	l.cols = func(n string) (string, func(string) (string, error)) {
		if f, ok := fixed[n]; ok {
			return f.name, f.conv
		}
		if i, ok := nativeIndex(n, "rpm_m", ""); ok {
			return fmt.Sprintf("motor%d", i), same
		}
		if i, ok := nativeIndex(n, "cell_", "_v"); ok {
			return fmt.Sprintf("cell%d", i), same
		}
		return "", nil
	}
	return l
}
