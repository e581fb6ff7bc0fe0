package api

import (
	"context"
	"net/http"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

type eventInput struct {
	At         *time.Time `json:"at"`
	Kind       string     `json:"kind"`
	Severity   string     `json:"severity"`
	AirframeID *string    `json:"airframe_id"`
	PartID     *string    `json:"part_id"`
	FlightID   *string    `json:"flight_id"`
	Detail     string     `json:"detail"`
}

func optionalID(field string, s *string) (*string, error) {
	if s == nil {
		return nil, nil
	}
	id, err := store.ParseID(field, *s)
	return &id, err
}

func (s *Server) createEvent(c *gin.Context) {
	var in eventInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	e := &fleet.Event{Kind: in.Kind, Severity: in.Severity, Detail: in.Detail, At: time.Now()}
	if in.At != nil {
		e.At = *in.At
	}
	var err error
	if e.AirframeID, err = optionalID("airframe_id", in.AirframeID); err == nil {
		if e.PartID, err = optionalID("part_id", in.PartID); err == nil {
			e.FlightID, err = optionalID("flight_id", in.FlightID)
		}
	}
	if err != nil {
		s.fail(c, err)
		return
	}
	out, err := s.db.CreateEvent(c.Request.Context(), e)
	if err != nil {
		s.fail(c, err)
		return
	}
	s.afterEvent(c.Request.Context(), out, out.At)
	c.Header("Location", "/v1/events/"+out.ID)
	writeOne(c, http.StatusCreated, out.Version, out)
}

func (s *Server) listEvents(c *gin.Context) {
	p, err := pageOf(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	f := store.EventFilter{Kind: c.Query("kind")}
	for _, q := range []struct {
		name string
		dst  *string
	}{{"airframe_id", &f.AirframeID}, {"part_id", &f.PartID}, {"flight_id", &f.FlightID}} {
		if *q.dst, err = queryID(c, q.name); err != nil {
			s.fail(c, err)
			return
		}
	}
	if f.Open, err = queryBool(c, "open"); err != nil {
		s.fail(c, err)
		return
	}
	list, next, err := s.db.Events(c.Request.Context(), f, p)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, next)
}

func (s *Server) getEvent(c *gin.Context) { getOne(s, c, "event", s.db.Event) }

type eventPatch struct {
	Detail     *string `json:"detail"`
	Severity   *string `json:"severity"`
	Resolved   *bool   `json:"resolved"`
	Resolution *string `json:"resolution"`
}

// patchEvent edits an event or resolves it (resolved: true with a resolution).
func (s *Server) patchEvent(c *gin.Context) {
	id, err := pathID(c, "event")
	if err != nil {
		s.fail(c, err)
		return
	}
	version, err := ifMatch(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	var in eventPatch
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	e, err := s.db.UpdateEvent(c.Request.Context(), id, version, store.EventPatch{Detail: in.Detail,
		Severity: in.Severity, Resolved: in.Resolved, Resolution: in.Resolution})
	if err != nil {
		s.fail(c, err)
		return
	}
	writeOne(c, http.StatusOK, e.Version, e)
}

// afterEvent brings verdicts and due lists up to date after an event opened
// or resolved at the moment from.
func (s *Server) afterEvent(ctx context.Context, e *fleet.Event, from time.Time) {
	var airframe string
	if e.AirframeID != nil {
		airframe = *e.AirframeID
	}
	var parts []string
	if e.PartID != nil {
		parts = append(parts, *e.PartID)
	}
	s.afterRecord(ctx, airframe, parts, from)
}
