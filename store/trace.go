package store

import (
	"context"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// ManifestFlight is one flight of a job with everything it carried.
type ManifestFlight struct {
	FlightID     string             `json:"flight_id"`
	AirframeID   string             `json:"airframe_id"`
	AirframeCode string             `json:"airframe_code"`
	Pilot        string             `json:"pilot"`
	TakeoffAt    time.Time          `json:"takeoff_at"`
	LandingAt    time.Time          `json:"landing_at"`
	Hours        float64            `json:"hours"`
	Parts        []fleet.FittedPart `json:"parts"`
	Packs        []fleet.FlightPack `json:"packs"`
	// ReadinessAtTakeoff is the flight's verdict as of take-off (nil: not
	// judged yet); FlownNotReadyEventID names the event that flags a flight
	// which took off not ready.
	ReadinessAtTakeoff   *fleet.Readiness `json:"readiness_at_takeoff"`
	FlownNotReadyEventID *string          `json:"flown_not_ready_event_id"`
}

// Manifest is the audit answer to "which parts flew on this job".
type Manifest struct {
	Job     *fleet.Job       `json:"job"`
	Flights []ManifestFlight `json:"flights"`
}

// fitAtTakeoff joins a fit to the flights it was on board for, in a form
// the (airframe_id, takeoff_at) index serves.
const fitAtTakeoff = `fl.airframe_id = f.airframe_id AND fl.takeoff_at >= lower(f.during)
	AND (upper_inf(f.during) OR fl.takeoff_at < upper(f.during))`

// Manifest returns every flight of the job with every part fitted at take-off
// and the packs flown.
func (db *DB) Manifest(ctx context.Context, jobID string) (*Manifest, error) {
	j, err := db.Job(ctx, jobID)
	if err != nil {
		return nil, err
	}
	rows, err := db.pool.Query(ctx, `
		SELECT fl.id, fl.airframe_id, a.code, fl.pilot, fl.takeoff_at, fl.landing_at, fl.readiness_at_takeoff,
			(SELECT e.id FROM events e WHERE e.flight_id = fl.id AND e.kind = 'flown_not_ready')
		FROM flights fl JOIN airframes a ON a.id = fl.airframe_id
		WHERE fl.job_id = $1 ORDER BY fl.takeoff_at, fl.id`, jobID)
	if err != nil {
		return nil, translate(err)
	}
	flights, err := collect(rows, func(r pgx.Row) (ManifestFlight, error) {
		var m ManifestFlight
		err := r.Scan(&m.FlightID, &m.AirframeID, &m.AirframeCode, &m.Pilot, &m.TakeoffAt, &m.LandingAt,
			&m.ReadinessAtTakeoff, &m.FlownNotReadyEventID)
		m.Hours = m.LandingAt.Sub(m.TakeoffAt).Hours()
		m.Parts, m.Packs = []fleet.FittedPart{}, []fleet.FlightPack{}
		return m, err
	})
	if err != nil {
		return nil, err
	}
	index := map[string]int{}
	ids := make([]string, len(flights))
	for i, f := range flights {
		index[f.FlightID], ids[i] = i, f.FlightID
	}
	rows, err = db.pool.Query(ctx, `
		SELECT fl.id, f.position, f.kind, p.id, p.serial, p.part_number, p.lot, lower(f.during)
		FROM flights fl
		JOIN fits f ON `+fitAtTakeoff+`
		JOIN parts p ON p.id = f.part_id
		WHERE fl.job_id = $1 ORDER BY fl.id, f.kind, f.position`, jobID)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	for rows.Next() {
		var fid string
		var p fleet.FittedPart
		if err := rows.Scan(&fid, &p.Position, &p.Kind, &p.PartID, &p.Serial, &p.PartNumber, &p.Lot, &p.FittedAt); err != nil {
			return nil, translate(err)
		}
		m := &flights[index[fid]]
		m.Parts = append(m.Parts, p)
	}
	if err := rows.Err(); err != nil {
		return nil, translate(err)
	}
	packs, err := db.flightPacks(ctx, ids)
	if err != nil {
		return nil, err
	}
	for i := range flights {
		flights[i].Packs = append(flights[i].Packs, packs[flights[i].FlightID]...)
	}
	if flights == nil {
		flights = []ManifestFlight{}
	}
	return &Manifest{Job: j, Flights: flights}, nil
}

// TraceFlight is a flight that carried one of the traced parts.
type TraceFlight struct {
	FlightID     string    `json:"flight_id"`
	AirframeCode string    `json:"airframe_code"`
	JobID        *string   `json:"job_id"`
	JobCode      *string   `json:"job_code"`
	TakeoffAt    time.Time `json:"takeoff_at"`
	Serials      []string  `json:"serials"`
}

// TraceJob is a job affected by the traced parts.
type TraceJob struct {
	ID      string `json:"id"`
	Code    string `json:"code"`
	Client  string `json:"client"`
	Flights int    `json:"flights"`
}

// Trace answers "which flights and jobs did these parts fly".
type Trace struct {
	Parts   []*fleet.Part `json:"parts"`
	Flights []TraceFlight `json:"flights"`
	Jobs    []TraceJob    `json:"jobs"`
}

// Trace finds the parts of a supplier lot or part number, every flight they
// flew (fitted at take-off, or as a pack) and the jobs those flights served.
func (db *DB) Trace(ctx context.Context, lot, partNumber string) (*Trace, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT `+partCols+` FROM parts
		WHERE ($1 = '' OR lot = $1) AND ($2 = '' OR part_number = $2) ORDER BY kind, serial`, lot, partNumber)
	if err != nil {
		return nil, translate(err)
	}
	parts, err := collect(rows, scanPart)
	if err != nil {
		return nil, err
	}
	ids := make([]string, len(parts))
	for i, p := range parts {
		ids[i] = p.ID
	}
	rows, err = db.pool.Query(ctx, `
		WITH carried AS (
			SELECT fl.id AS flight_id, f.part_id FROM fits f JOIN flights fl ON `+fitAtTakeoff+`
			WHERE f.part_id = ANY($1::uuid[])
			UNION
			SELECT fp.flight_id, fp.part_id FROM flight_packs fp WHERE fp.part_id = ANY($1::uuid[]))
		SELECT fl.id, a.code, j.id, j.code, fl.takeoff_at, array_agg(p.serial ORDER BY p.serial)
		FROM carried c
		JOIN flights fl ON fl.id = c.flight_id
		JOIN airframes a ON a.id = fl.airframe_id
		JOIN parts p ON p.id = c.part_id
		LEFT JOIN jobs j ON j.id = fl.job_id
		GROUP BY fl.id, a.code, j.id, j.code, fl.takeoff_at
		ORDER BY fl.takeoff_at, fl.id`, ids)
	if err != nil {
		return nil, translate(err)
	}
	flights, err := collect(rows, func(r pgx.Row) (TraceFlight, error) {
		var t TraceFlight
		return t, r.Scan(&t.FlightID, &t.AirframeCode, &t.JobID, &t.JobCode, &t.TakeoffAt, &t.Serials)
	})
	if err != nil {
		return nil, err
	}
	jobs := []TraceJob{}
	seen := map[string]int{}
	for _, f := range flights {
		if f.JobID == nil {
			continue
		}
		if i, ok := seen[*f.JobID]; ok {
			jobs[i].Flights++
			continue
		}
		seen[*f.JobID] = len(jobs)
		jobs = append(jobs, TraceJob{ID: *f.JobID, Code: *f.JobCode, Flights: 1})
	}
	for i := range jobs {
		if err := db.pool.QueryRow(ctx, `SELECT client FROM jobs WHERE id = $1`, jobs[i].ID).Scan(&jobs[i].Client); err != nil {
			return nil, translate(err)
		}
	}
	if parts == nil {
		parts = []*fleet.Part{}
	}
	if flights == nil {
		flights = []TraceFlight{}
	}
	return &Trace{Parts: parts, Flights: flights, Jobs: jobs}, nil
}

// HistoryFit is one stay of the part on an airframe.
type HistoryFit struct {
	fleet.Fit
	AirframeCode string `json:"airframe_code"`
}

// HistoryFlight is one flight the part flew.
type HistoryFlight struct {
	FlightID     string    `json:"flight_id"`
	AirframeCode string    `json:"airframe_code"`
	JobCode      *string   `json:"job_code"`
	TakeoffAt    time.Time `json:"takeoff_at"`
	LandingAt    time.Time `json:"landing_at"`
	Hours        float64   `json:"hours"`
}

// HistoryTotals are the part's time in service and cycles, across airframes.
type HistoryTotals struct {
	Flights int     `json:"flights"`
	Cycles  int     `json:"cycles"`
	Hours   float64 `json:"hours"`
}

// History is the full record of a part.
type History struct {
	Part       *fleet.Part              `json:"part"`
	Fits       []HistoryFit             `json:"fits"`
	Totals     HistoryTotals            `json:"totals"`
	ByAirframe map[string]HistoryTotals `json:"by_airframe"`
	Flights    []HistoryFlight          `json:"flights"`
	Events     []*fleet.Event           `json:"events"`
}

// PartHistory returns the part's fits, every flight it flew (fitted at
// take-off, or as a pack) with totals carried across airframes, and its events.
func (db *DB) PartHistory(ctx context.Context, id string) (*History, error) {
	p, err := db.Part(ctx, id)
	if err != nil {
		return nil, err
	}
	h := &History{Part: p, Fits: []HistoryFit{}, Flights: []HistoryFlight{}, ByAirframe: map[string]HistoryTotals{}}
	rows, err := db.pool.Query(ctx, `
		SELECT f.id, f.part_id, f.airframe_id, f.kind, f.position, lower(f.during), upper(f.during), f.removal_reason, a.code
		FROM fits f JOIN airframes a ON a.id = f.airframe_id WHERE f.part_id = $1 ORDER BY lower(f.during)`, id)
	if err != nil {
		return nil, translate(err)
	}
	fits, err := collect(rows, func(r pgx.Row) (HistoryFit, error) {
		var f HistoryFit
		return f, r.Scan(&f.ID, &f.PartID, &f.AirframeID, &f.Kind, &f.Position, &f.FittedAt, &f.RemovedAt, &f.RemovalReason, &f.AirframeCode)
	})
	if err != nil {
		return nil, err
	}
	if fits != nil {
		h.Fits = fits
	}
	rows, err = db.pool.Query(ctx, `
		WITH flown AS (
			SELECT fl.id FROM fits f JOIN flights fl ON `+fitAtTakeoff+` WHERE f.part_id = $1
			UNION
			SELECT flight_id FROM flight_packs WHERE part_id = $1)
		SELECT fl.id, a.code, j.code, fl.takeoff_at, fl.landing_at
		FROM flown JOIN flights fl ON fl.id = flown.id
		JOIN airframes a ON a.id = fl.airframe_id LEFT JOIN jobs j ON j.id = fl.job_id
		ORDER BY fl.takeoff_at`, id)
	if err != nil {
		return nil, translate(err)
	}
	flights, err := collect(rows, func(r pgx.Row) (HistoryFlight, error) {
		var f HistoryFlight
		err := r.Scan(&f.FlightID, &f.AirframeCode, &f.JobCode, &f.TakeoffAt, &f.LandingAt)
		f.Hours = f.LandingAt.Sub(f.TakeoffAt).Hours()
		return f, err
	})
	if err != nil {
		return nil, err
	}
	for _, f := range flights {
		h.Totals.add(f.Hours)
		t := h.ByAirframe[f.AirframeCode]
		t.add(f.Hours)
		h.ByAirframe[f.AirframeCode] = t
	}
	if flights != nil {
		h.Flights = flights
	}
	h.Events, _, err = db.Events(ctx, EventFilter{PartID: id}, Page{Limit: MaxPageSize})
	if h.Events == nil {
		h.Events = []*fleet.Event{}
	}
	return h, err
}

func (t *HistoryTotals) add(hours float64) {
	t.Flights++
	t.Cycles++
	t.Hours += hours
}
