package api

import (
	"errors"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"strings"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/store"
)

// flightInput is a manually entered flight.
type flightInput struct {
	AirframeID     string    `json:"airframe_id"`
	JobID          *string   `json:"job_id"`
	Pilot          string    `json:"pilot"`
	TakeoffAt      time.Time `json:"takeoff_at"`
	LandingAt      time.Time `json:"landing_at"`
	Packs          []string  `json:"packs"`
	TakeoffMassG   *float64  `json:"takeoff_mass_g"`
	SiteElevationM *float64  `json:"site_elevation_m"`
	Notes          string    `json:"notes"`
	OverrideReason *string   `json:"override_reason"`
	Software       *string   `json:"software"`
}

// flight turns the input into a domain flight, checking the ids.
func (in *flightInput) flight() (*fleet.Flight, error) {
	f := &fleet.Flight{Pilot: in.Pilot, TakeoffAt: in.TakeoffAt, LandingAt: in.LandingAt,
		TakeoffMassG: in.TakeoffMassG, SiteElevationM: in.SiteElevationM, Notes: in.Notes, OverrideReason: in.OverrideReason,
		Software: in.Software}
	if in.AirframeID != "" { // missing is refused by validation, or filled from a log
		id, err := store.ParseID("airframe_id", in.AirframeID)
		if err != nil {
			return nil, err
		}
		f.AirframeID = id
	}
	if in.JobID != nil {
		id, err := store.ParseID("job_id", *in.JobID)
		if err != nil {
			return nil, err
		}
		f.JobID = &id
	}
	for i, p := range in.Packs {
		id, err := store.ParseID(fmt.Sprintf("packs[%d]", i), p)
		if err != nil {
			return nil, err
		}
		f.Packs = append(f.Packs, fleet.FlightPack{PartID: id, Slot: i + 1})
	}
	return f, nil
}

// createFlight records a flight: JSON for a manual entry, or multipart with
// a `flight` JSON part and a `log` CSV part for an uploaded log. Readiness
// never refuses a flight: it is recorded with its verdict as of take-off,
// whose blockers come back as warnings (and open a flown_not_ready event).
func (s *Server) createFlight(c *gin.Context) {
	if strings.HasPrefix(c.ContentType(), "multipart/") {
		s.uploadFlight(c)
		return
	}
	var in flightInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	f, err := in.flight()
	if err == nil {
		err = pilotOf(c, f)
	}
	if err != nil {
		s.fail(c, err)
		return
	}
	if err := f.Validate(); err != nil {
		s.fail(c, err)
		return
	}
	ctx := c.Request.Context()
	rd, err := s.prog.JudgeTakeoff(ctx, f)
	if err != nil {
		s.fail(c, err)
		return
	}
	f.SetVerdict(rd)
	out, err := s.db.CreateFlight(ctx, f)
	if err != nil {
		s.fail(c, err)
		return
	}
	// As after a logged flight: the health of what it carried (a pack's
	// flights and cycles count it), with the due list beside.
	if err := s.ingest.Recorded(ctx, out); err != nil {
		s.log.Error("health after a flight", "flight", out.ID, "err", err) // repaired by the next refresh or recompute
	}
	d, err := s.db.FlightDetail(ctx, out.ID)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.Header("Location", "/v1/flights/"+out.ID)
	c.JSON(http.StatusCreated, d)
}

// uploadInput is the `flight` part of an upload: everything optional that
// the log's metadata can supply.
type uploadInput struct {
	AirframeID     *string    `json:"airframe_id"`
	JobID          *string    `json:"job_id"`
	Pilot          string     `json:"pilot"`
	TakeoffAt      *time.Time `json:"takeoff_at"`
	LandingAt      *time.Time `json:"landing_at"`
	Packs          []string   `json:"packs"`
	TakeoffMassG   *float64   `json:"takeoff_mass_g"`
	SiteElevationM *float64   `json:"site_elevation_m"`
	Notes          string     `json:"notes"`
	OverrideReason *string    `json:"override_reason"`
}

// uploadFlight ingests a log: 201 with the new flight, or 200 with the flight
// already recorded from the same log.
func (s *Server) uploadFlight(c *gin.Context) {
	c.Request.Body = http.MaxBytesReader(c.Writer, c.Request.Body, s.limits.LogBytes+s.limits.JSONBytes)
	mr, err := c.Request.MultipartReader()
	if err != nil {
		s.fail(c, fleet.Errorf(fleet.EINVALID, "send multipart/form-data with a flight part and a log part"))
		return
	}
	var in uploadInput
	var logData []byte
	var haveFlight, gz bool
	var mapRef string
	for {
		part, err := mr.NextPart()
		if err == io.EOF {
			break
		} else if err != nil {
			s.fail(c, uploadError(err, s.limits))
			return
		}
		switch part.FormName() {
		case "flight":
			b, err := io.ReadAll(io.LimitReader(part, s.limits.JSONBytes+1))
			if err != nil {
				s.fail(c, uploadError(err, s.limits))
				return
			}
			if int64(len(b)) > s.limits.JSONBytes {
				s.fail(c, &fleet.Error{Code: fleet.ETOOLARGE, Field: "flight", Message: "the flight part is over the JSON limit"})
				return
			}
			if err := strictUnmarshal(b, &in); err != nil {
				s.fail(c, err)
				return
			}
			haveFlight = true
		case "column_map":
			b, err := io.ReadAll(io.LimitReader(part, 256))
			if err != nil {
				s.fail(c, uploadError(err, s.limits))
				return
			}
			if mapRef = strings.TrimSpace(string(b)); mapRef == "" || len(b) == 256 {
				s.fail(c, fleet.FieldError("column_map", "give a column map's name or id (or native)"))
				return
			}
		case "log":
			if gz, err = logEncoding(part); err != nil {
				s.fail(c, err)
				return
			}
			// Read once into a buffer sized from the request's length (the
			// part is within it); the ingest hashes it beside the parse.
			if logData, err = readSized(io.LimitReader(part, s.limits.LogBytes+1),
				c.Request.ContentLength, s.limits.LogBytes+1); err != nil {
				s.fail(c, uploadError(err, s.limits))
				return
			}
			if int64(len(logData)) > s.limits.LogBytes {
				s.fail(c, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "log",
					Message: fmt.Sprintf("the log is over %d bytes", s.limits.LogBytes)})
				return
			}
		default:
			s.fail(c, fleet.FieldError(part.FormName(), "is not a known part (send flight, log and optionally column_map)"))
			return
		}
	}
	if !haveFlight || logData == nil {
		s.fail(c, fleet.FieldError("log", "send both a flight part (JSON) and a log part (CSV)"))
		return
	}
	f, err := in.flight()
	if err == nil {
		err = pilotOf(c, f)
	}
	if err != nil {
		s.fail(c, err)
		return
	}
	res, err := s.ingest.Ingest(c.Request.Context(), ingest.Request{Flight: *f, Log: logData,
		Gzip: gz, ColumnMap: mapRef})
	if err != nil {
		s.fail(c, err)
		return
	}
	if res.HealthErr != nil {
		s.log.Error("health refresh after ingest", "flight", res.FlightID, "err", res.HealthErr)
	}
	d, err := s.db.FlightDetail(c.Request.Context(), res.FlightID)
	if err != nil {
		s.fail(c, err)
		return
	}
	status := http.StatusOK
	if res.Created {
		status = http.StatusCreated
	}
	c.Header("Location", "/v1/flights/"+d.ID)
	c.JSON(status, d)
}

// readSized reads r to its end into one buffer of about size bytes (the
// request's Content-Length, an upper bound on a part's size; 0 or less when
// unknown), at most max: sized once, so a large log is neither copied while
// the buffer grows nor held twice.
func readSized(r io.Reader, size, max int64) ([]byte, error) {
	if size <= 0 || size > max {
		size = min(max, 512<<10)
	}
	buf := make([]byte, 0, size)
	var probe [512]byte
	for {
		var n int
		var err error
		if len(buf) < cap(buf) {
			n, err = r.Read(buf[len(buf):cap(buf)])
			buf = buf[:len(buf)+n]
		} else {
			// Full: look for more before growing, so that an exact size
			// ends without a copy; more means the size was understated.
			n, err = r.Read(probe[:])
			buf = append(buf, probe[:n]...)
		}
		if err == io.EOF {
			return buf, nil
		}
		if err != nil {
			return buf, err
		}
	}
}

// pilotOf sets a flight's pilot to the key's person when none is given, and
// lets only a technician (or above) record a flight flown by someone else.
func pilotOf(c *gin.Context, f *fleet.Flight) error {
	k := c.MustGet(ctxKey).(*fleet.APIKey)
	if f.Pilot == "" {
		f.Pilot = k.Person
		return nil
	}
	if !strings.EqualFold(strings.TrimSpace(f.Pilot), strings.TrimSpace(k.Person)) && !k.Role.AtLeast(fleet.RoleTechnician) {
		return &fleet.Error{Code: fleet.EFORBIDDEN, Field: "pilot",
			Message: fmt.Sprintf("this key belongs to %s: recording a flight flown by someone else needs a technician", k.Person)}
	}
	return nil
}

func (in *uploadInput) flight() (*fleet.Flight, error) {
	full := flightInput{JobID: in.JobID, Pilot: in.Pilot, Packs: in.Packs, TakeoffMassG: in.TakeoffMassG,
		SiteElevationM: in.SiteElevationM, Notes: in.Notes, OverrideReason: in.OverrideReason}
	if in.TakeoffAt != nil {
		full.TakeoffAt = *in.TakeoffAt
	}
	if in.LandingAt != nil {
		full.LandingAt = *in.LandingAt
	}
	if (in.TakeoffAt == nil) != (in.LandingAt == nil) {
		return nil, fleet.FieldError("landing_at", "give both takeoff_at and landing_at, or neither")
	}
	if in.AirframeID != nil {
		full.AirframeID = *in.AirframeID
	}
	return full.flight()
}

// logEncoding reads whether the log part is gzip-compressed: by its
// Content-Encoding, or a .gz file name.
func logEncoding(part *multipart.Part) (bool, error) {
	switch enc := strings.ToLower(strings.TrimSpace(part.Header.Get("Content-Encoding"))); enc {
	case "gzip", "x-gzip":
		return true, nil
	case "", "identity":
		return strings.HasSuffix(strings.ToLower(part.FileName()), ".gz"), nil
	default:
		return false, fleet.FieldError("log", "Content-Encoding %q is not supported; send the log plain or gzip-compressed", enc)
	}
}

func uploadError(err error, l Limits) error {
	var mbe *http.MaxBytesError
	if errors.As(err, &mbe) {
		return fleet.Errorf(fleet.ETOOLARGE, "upload over %d bytes", l.LogBytes+l.JSONBytes)
	}
	if errors.Is(err, errBodyTooSlow) {
		return fleet.Errorf(fleet.ETIMEOUT, "the upload arrived too slowly: after %s it must average at least %s",
			l.BodyGrace, byteRate(l.MinBodyRate))
	}
	return fleet.Errorf(fleet.EINVALID, "malformed multipart body")
}

func (s *Server) listFlights(c *gin.Context) {
	p, err := pageOf(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	var f store.FlightFilter
	if f.AirframeID, err = queryID(c, "airframe_id"); err != nil {
		s.fail(c, err)
		return
	}
	if f.JobID, err = queryID(c, "job_id"); err != nil {
		s.fail(c, err)
		return
	}
	if f.From, err = queryTime(c, "from"); err != nil {
		s.fail(c, err)
		return
	}
	if f.To, err = queryTime(c, "to"); err != nil {
		s.fail(c, err)
		return
	}
	list, next, err := s.db.Flights(c.Request.Context(), f, p)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, next)
}

func (s *Server) getFlight(c *gin.Context) {
	id, err := pathID(c, "flight")
	if err != nil {
		s.fail(c, err)
		return
	}
	d, err := s.db.FlightDetail(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.JSON(http.StatusOK, d)
}

// getFlightLog returns the stored log exactly as uploaded.
func (s *Server) getFlightLog(c *gin.Context) {
	id, err := pathID(c, "flight")
	if err != nil {
		s.fail(c, err)
		return
	}
	gz, err := s.db.RawLog(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	raw, err := ingest.Decompress(gz)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.Header("Content-Disposition", `attachment; filename="flight-`+id+`.csv"`)
	c.Data(http.StatusOK, "text/csv; charset=utf-8", raw)
}
