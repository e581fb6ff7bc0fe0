// Package telemetry parses flight logs and computes per-flight figures from
// them. It does no I/O beyond reading the log from an io.Reader.
//
// # Log format
//
// A log is CSV, UTF-8, comma-separated, with one header row naming the
// columns (in any order). Lines starting with '#' are comments wherever they
// are; a comment of the form "# key: value" before the header is metadata:
// start (RFC 3339 time of t_s = 0), airframe (the airframe's code), packs
// (pack serials, comma-separated); other keys are kept as they are. Lines may
// end in LF or CRLF; empty lines are skipped. Fields are not quoted, so a
// text value in an unknown column cannot hold a comma.
//
//	column            unit                                   required
//	t_s               seconds since log start, strictly increasing   yes
//	pack_v            volts at the pack terminals                     yes
//	pack_a            amps drawn from the pack(s)                     yes
//	rpm_<position>    rotor speed, rev/min (rpm_m1, rpm_m2, ...), >= 0 no
//	throttle          mean command 0..1, for logs without rpm         no
//	cell_<n>_v        per-cell volts, n = 1..cells (at most 64)       no
//	baro_pa           static pressure, Pa                             no
//	temp_c            outside air temperature, deg C                  no
//	acc_x, acc_y, acc_z  body acceleration, m/s^2 (gravity included)  no
//	lat, lon          WGS 84 degrees, always together                 no
//
// Unknown columns are ignored (any content, empty included) and reported in
// Log.Unknown. Every recognised value must be a finite number of magnitude at
// most 1e12, or, in an optional column, blank (empty or spaces): no reading
// at that sample. Refused: a missing required column, a recognised column
// given twice, lat without lon (or the reverse) in the header or in a row
// (a fix has both or neither), cell columns not numbered 1..n, an empty
// t_s, pack_v or pack_a, a non-numeric value, NaN or infinity (the text "NaN"
// is not a blank), a value outside its column's range (throttle 0..1; rpm
// and cell volts >= 0; baro_pa > 0; temp_c above -273.15; lat -90..90; lon
// -180..180), a row with the wrong number of fields, time that does not
// increase (an equal time is refused), more data rows or bytes than the
// Limits, an invalid start time, a metadata key given twice, and a log
// without a header or without data rows. A refusal is a *fleet.Error with
// code EUNPROCESSABLE, the physical line (1-based, comments and header
// counted) and the column at fault.
//
// # Blank cells
//
// Loggers leave optional cells blank (no GPS fix yet, a sensor reporting
// every other row, a dropped telemetry frame). Inside this package a blank
// is NaN in its series (a value in the log itself never is), and Log.Blank
// counts the blanks per column by the service's column name (through a
// column map, the target's). A column blank in every row is treated as
// absent: its series nil, left out of Log.Columns (a cell column keeps its
// place in Log.Cells, nil), its figures null. Analyze computes every figure
// from the readings present:
//
//   - minima, maxima and medians over the readings only;
//   - rotor speed, throttle, cell volts, pressure and temperature: a blank
//     stretch between two readings at most Params.MaxGapS apart (default
//     1 s) is taken as linear between them (the trapezoidal rule's own
//     assumption between samples), so integrals (revolutions, load spectra,
//     run time) and per-sample combinations (mean rotor speed, lowest cell,
//     air density) span it; a longer gap is left out of every integral and
//     mean (a note gives the time lost), never filled;
//   - distance and range fix to fix, across any blank;
//   - height above take-off from the pressure readings, with a reading
//     before take-off (else null, noted); air density over the samples with
//     both pressure and temperature (else the standard atmosphere, noted);
//   - vibration high-passed over each run of consecutive acceleration
//     readings on its own, never across a blank; landing load the peak over
//     the samples with all three axes;
//   - resistance per cell from steps whose both ends are readings.
//
// Metrics.Warnings names the figures resting on a column with readings in
// fewer than half of the log's samples.
//
// Example:
//
//	# start: 2026-05-14T09:30:00Z
//	# airframe: RW-07
//	# packs: P-0112, P-0113
//	t_s,pack_v,pack_a,rpm_m1,rpm_m2,rpm_m3,rpm_m4,baro_pa,temp_c
//	0.00,25.12,0.8,0,0,0,0,98012,14.5
//	0.02,25.11,0.8,0,0,0,0,98012,14.5
//	# spin-up
//	0.04,24.60,18.2,4105,4098,4120,4088,98011,14.5
//
// # Foreign layouts
//
// ParseMapped reads a log in another layout through a column map
// (fleet.ColumnMap): the header on the map's header row (lines before it are
// skipped), fields split at its delimiter (comma, semicolon or tab) as RFC
// 4180 has them (a quoted field may hold the delimiter, line breaks and
// doubled quotes; a quote inside an unquoted field is refused), a UTF-8
// byte-order mark and blank lines ignored. The time column is read in its
// unit (s, ms, us, ns) from its origin: "start" (time since the log's
// start), "epoch" (Unix time; the log starts at the first sample, which
// sets Meta.Start) or "rfc3339" (a time string per row, a space allowed
// between date and time). Every other mapped source becomes its target as
// target = s * scale + offset, s the source value negated first when the
// map says negate; a power-of-ten scale moves the decimal point exactly.
// The refusals are those above, checked on the converted values, and each
// names the physical line and the source column with its target:
// `line 812, column BattCurr_cA (maps to pack_a)`. Detect picks a map for a
// log from its header row and the maps' detect names.
//
// # Figures
//
// Analyze integrates by the trapezoidal rule over the actual time steps and
// returns Metrics: charge, energy, power, current, voltage extremes (per cell
// too) and rest voltages, DC resistance from current steps, run time and the
// airborne span, per-motor revolutions and load spectra, the thrust constant
// k (T = k rpm^2) from mean thrust = weight aloft, a hover efficiency index
// against momentum-theory ideal power, air density, height above take-off,
// vibration, landing load, distance flown, and detected events. A figure
// whose inputs are missing is null, never guessed; Metrics.Notes say what was
// left out and why, Metrics.Warnings which figures rest on thin columns.
//
// Definitions a technician reads: mean_power_w is the mean while airborne
// (over the run span when there is no airborne span, over the whole log
// when there is neither; mean_power_source says which), log_mean_power_w
// the mean over the whole log, rest on the ground included. A load
// spectrum takes the rpm as linear between samples and splits each
// interval across the bins it spans, so irregular sampling and gaps do not
// move time between bins. Vibration is high-passed at a corner chosen from
// the sample rate (2 Hz, at most a tenth of the Nyquist frequency); when
// the rotor frequency (hover rpm / 60) is above half the sample rate the
// rotor's vibration cannot be resolved: the figures are then broadband, no
// spectral peak is given and the caveat says "rotor vibration not
// resolvable at N Hz".
package telemetry
