package api

import (
	"fmt"
	"net/http"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
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
}

// flight turns the input into a domain flight, checking the ids.
func (in *flightInput) flight() (*fleet.Flight, error) {
	f := &fleet.Flight{Pilot: in.Pilot, TakeoffAt: in.TakeoffAt, LandingAt: in.LandingAt,
		TakeoffMassG: in.TakeoffMassG, SiteElevationM: in.SiteElevationM, Notes: in.Notes}
	var err error
	if f.AirframeID, err = store.ParseID("airframe_id", in.AirframeID); err != nil {
		return nil, err
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

func (s *Server) createFlight(c *gin.Context) {
	var in flightInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	f, err := in.flight()
	if err != nil {
		s.fail(c, err)
		return
	}
	out, err := s.db.CreateFlight(c.Request.Context(), f)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.Header("Location", "/v1/flights/"+out.ID)
	c.JSON(http.StatusCreated, out)
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
	f, err := s.db.Flight(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.JSON(http.StatusOK, f)
}
