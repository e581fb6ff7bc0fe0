package api

import (
	"net/http"
	"strconv"
	"sync"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// airframeWritable are the members a client may set on an airframe.
var airframeWritable = []string{"code", "name", "model", "layout", "cells_s", "packs_per_flight",
	"empty_mass_g", "mtow_g", "rotor_diameter_mm", "hold_reason", "notes"}

func (s *Server) createAirframe(c *gin.Context) {
	in := fleet.Airframe{PacksPerFlight: 1}
	if err := s.decodeWritable(c, &in, airframeWritable...); err != nil {
		s.fail(c, err)
		return
	}
	a, err := s.db.CreateAirframe(c.Request.Context(), &in)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.Header("Location", "/v1/airframes/"+a.ID)
	writeOne(c, http.StatusCreated, a.Version, a)
}

func (s *Server) listAirframes(c *gin.Context) {
	p, err := pageOf(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	f := store.AirframeFilter{Status: c.Query("status"), Model: c.Query("model"), Layout: c.Query("layout")}
	list, next, err := s.db.Airframes(c.Request.Context(), f, p)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, next)
}

func (s *Server) getAirframe(c *gin.Context) { getOne(s, c, "airframe", s.db.Airframe) }

func (s *Server) patchAirframe(c *gin.Context) {
	id, version, body, ok := s.patchInput(c, "airframe")
	if !ok {
		return
	}
	a, err := s.db.UpdateAirframe(c.Request.Context(), id, version, func(a *fleet.Airframe) error {
		return applyMergePatch(body, a, airframeWritable...)
	})
	if err != nil {
		s.fail(c, err)
		return
	}
	writeOne(c, http.StatusOK, a.Version, a)
}

// retireAirframe answers DELETE: records of an aircraft must be kept, so the
// airframe is retired (its fitted parts removed), never erased.
func (s *Server) retireAirframe(c *gin.Context) {
	id, err := pathID(c, "airframe")
	if err != nil {
		s.fail(c, err)
		return
	}
	version, err := ifMatch(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	a, err := s.db.RetireAirframe(c.Request.Context(), id, version)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeOne(c, http.StatusOK, a.Version, a)
}

type fitInput struct {
	PartID   string     `json:"part_id"`
	Position string     `json:"position"`
	At       *time.Time `json:"at"`
}

func (s *Server) createFit(c *gin.Context) {
	id, err := pathID(c, "airframe")
	if err != nil {
		s.fail(c, err)
		return
	}
	var in fitInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	partID, err := store.ParseID("part_id", in.PartID)
	if err != nil {
		s.fail(c, err)
		return
	}
	r := store.FitRequest{PartID: partID, Position: in.Position}
	if in.At != nil {
		r.At = *in.At
	}
	f, err := s.db.Fit(c.Request.Context(), id, r)
	if err != nil {
		s.fail(c, err)
		return
	}
	s.afterRecord(c.Request.Context(), id, nil, f.FittedAt)
	c.JSON(http.StatusCreated, f)
}

type removalInput struct {
	PartID string     `json:"part_id"`
	At     *time.Time `json:"at"`
	Reason string     `json:"reason"`
}

func (s *Server) createRemoval(c *gin.Context) {
	id, err := pathID(c, "airframe")
	if err != nil {
		s.fail(c, err)
		return
	}
	var in removalInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	partID, err := store.ParseID("part_id", in.PartID)
	if err != nil {
		s.fail(c, err)
		return
	}
	r := store.RemovalRequest{PartID: partID, Reason: in.Reason}
	if in.At != nil {
		r.At = *in.At
	}
	f, err := s.db.Remove(c.Request.Context(), id, r)
	if err != nil {
		s.fail(c, err)
		return
	}
	from := time.Now()
	if f.RemovedAt != nil {
		from = *f.RemovedAt
	}
	s.afterRecord(c.Request.Context(), id, nil, from)
	c.JSON(http.StatusCreated, f)
}

func (s *Server) getFitment(c *gin.Context) {
	id, err := pathID(c, "airframe")
	if err != nil {
		s.fail(c, err)
		return
	}
	at := time.Now()
	if t, err := queryTime(c, "at"); err != nil {
		s.fail(c, err)
		return
	} else if t != nil {
		at = *t
	}
	// The database writes the parts and empty places as the JSON sent
	// (store.AppendFitmentJSON); only the envelope is written here, all of
	// it into one buffer reused from request to request (the answer was
	// two allocations a request, most of the lookup's garbage).
	bp := answerBufs.Get().(*[]byte)
	defer putAnswerBuf(bp)
	b := append((*bp)[:0], `{"airframe_id":`...)
	b = strconv.AppendQuote(b, id) // a canonical UUID: nothing to escape
	b = append(b, `,"at":"`...)
	b = at.UTC().AppendFormat(b, time.RFC3339Nano)
	b = append(b, `","parts":`...)
	b, _, err = s.db.AppendFitmentJSON(c.Request.Context(), b, id, at, `,"empty":`)
	if err != nil {
		s.fail(c, err)
		return
	}
	b = append(b, '}')
	*bp = b
	c.Data(http.StatusOK, "application/json; charset=utf-8", b) // copied out before it returns
}

// answerBufs are buffers for answers written whole before they are sent.
var answerBufs = sync.Pool{New: func() any { b := make([]byte, 0, 4096); return &b }}

// putAnswerBuf returns a buffer to answerBufs, unless an unusually large
// answer grew it (kept, it would hold that memory for good).
func putAnswerBuf(bp *[]byte) {
	if cap(*bp) <= 64<<10 {
		answerBufs.Put(bp)
	}
}

func (s *Server) listLayouts(c *gin.Context) {
	list, err := s.db.Layouts(c.Request.Context())
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, "")
}

type layoutInput struct {
	Name      string           `json:"name"`
	Positions []fleet.Position `json:"positions"`
}

func (s *Server) createLayout(c *gin.Context) {
	var in layoutInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	l, err := s.db.CreateLayout(c.Request.Context(), &fleet.Layout{Name: in.Name, Positions: in.Positions})
	if err != nil {
		s.fail(c, err)
		return
	}
	c.JSON(http.StatusCreated, l)
}
