package schedule_test

import (
	"math"
	"os"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/health"
)

// An airframe whose logs changed sample rate, its vibration unchanged (the
// simulator's level is the same on every flight): the vibration trend takes
// only the flights measured over the latest flight's band, so it stays flat
// and unflagged. RMS over another band is another measure: the 5 Hz logs'
// high-pass corner sits at 0.25 Hz (a tenth of their Nyquist frequency), low
// enough to take in manoeuvres a 50 Hz log's 2 Hz corner leaves out; by
// Parseval's theorem the RMS is the root of the spectrum summed over the
// band, so the wider band reads higher for the same airframe. Before, the
// trend ran over both rates and read the change of rate as a rise.
func TestVibrationTrendKeepsToOneBand(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("SIM-VB", "VB")
	b.fullQuad(a, b.ago(30*day), 2000, "PR-10")
	pk := b.pack(4, "")
	fly := func(i int, hz float64) {
		b.logged(a, pk, b.spec(a, pk, uint64(900+i), b.ago(time.Duration(20-i)*day), hz, 300))
	}
	const fast, slow = 6, 5
	for i := range fast {
		fly(i, 50)
	}
	for i := range slow {
		fly(fast+i, 5)
	}
	raw, err := b.db.AirframeTrends(b.ctx, a.ID)
	if err != nil {
		t.Fatal(err)
	}
	tv := decode[health.TrendsView](t, raw)
	var fastRMS, slowRMS []float64
	for i, p := range tv.Series {
		if p.VibrationRMS == nil {
			t.Fatalf("flight %d has no vibration figure", i)
		}
		if i < fast {
			fastRMS = append(fastRMS, *p.VibrationRMS)
		} else {
			slowRMS = append(slowRMS, *p.VibrationRMS)
		}
	}
	t.Logf("vibration RMS at 50 Hz %.3f, at 5 Hz %.3f; band %v, left out %d", fastRMS, slowRMS, tv.VibrationBandHz, tv.VibrationOtherBand)
	if tv.Vibration == nil || tv.Vibration.N != slow || tv.VibrationOtherBand != fast {
		t.Fatalf("vibration trend %+v with %d left out: want it over the %d flights at 5 Hz, the %d at 50 Hz left out",
			tv.Vibration, tv.VibrationOtherBand, slow, fast)
	}
	// The 5 Hz band: corner 5/2/10 Hz, top 5/2 Hz (telemetry.Vibration);
	// 5 %: room for the mean rate's wander over a log (the simulator
	// jitters its timing; here the band is off by about 0.2 %).
	if bh := tv.VibrationBandHz; bh == nil || math.Abs(bh[0]-0.25) > 0.05*0.25 || math.Abs(bh[1]-2.5) > 0.05*2.5 {
		t.Errorf("band %v Hz, want about [0.25 2.5]", tv.VibrationBandHz)
	}
	if tv.Vibration.Flag || math.Abs(tv.Vibration.RisePct) >= tv.LimitPct/2 {
		t.Errorf("an unchanged airframe's vibration trend rises %.1f %% (flag %v, limit %.0f %%)",
			tv.Vibration.RisePct, tv.Vibration.Flag, tv.LimitPct)
	}
}

// Migration 030 fills the band of flights analysed before it from the
// figures kept beside them: the same band ingest now writes.
func TestVibrationBandBackfill(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("SIM-VF", "VF")
	b.fullQuad(a, b.ago(30*day), 2000, "PR-10")
	pk := b.pack(4, "")
	for i, hz := range []float64{5, 50} {
		b.logged(a, pk, b.spec(a, pk, uint64(950+i), b.ago(time.Duration(5-i)*day), hz, 120))
	}
	sql, err := os.ReadFile("../migrations/030_vibration_band.sql")
	if err != nil {
		t.Fatal(err)
	}
	update := string(sql[strings.Index(string(sql), "UPDATE flight_metrics"):])
	const bands = `SELECT array_agg(array[vibration_sample_hz, vibration_cutoff_hz] ORDER BY f.takeoff_at)
		FROM flight_metrics m JOIN flights f ON f.id = m.flight_id WHERE f.airframe_id = $1`
	var written, filled [][]float64
	pool := b.db.Pool()
	if err := pool.QueryRow(b.ctx, bands, a.ID).Scan(&written); err != nil {
		t.Fatal(err)
	}
	if _, err := pool.Exec(b.ctx, `UPDATE flight_metrics SET vibration_sample_hz = NULL, vibration_cutoff_hz = NULL
		WHERE flight_id IN (SELECT id FROM flights WHERE airframe_id = $1)`, a.ID); err != nil {
		t.Fatal(err)
	}
	if _, err := pool.Exec(b.ctx, update); err != nil {
		t.Fatal(err)
	}
	if err := pool.QueryRow(b.ctx, bands, a.ID).Scan(&filled); err != nil {
		t.Fatal(err)
	}
	if len(written) != 2 || written[0][0] > 6 || written[1][0] < 45 || !slices.EqualFunc(written, filled, slices.Equal) {
		t.Errorf("bands written by ingest %v, filled by the migration %v", written, filled)
	}
}
