package api

import (
	"net/http"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/store"
)

// partHealth computes the part's health view now (and stores it): the
// bearing view of a motor, the health of a pack, the life of a propeller,
// each with the series behind it and the forecast.
func (s *Server) partHealth(c *gin.Context) {
	id, err := pathID(c, "part")
	if err != nil {
		s.fail(c, err)
		return
	}
	v, err := s.health.Part(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.JSON(http.StatusOK, v)
}

func (s *Server) airframeTrends(c *gin.Context) {
	id, err := pathID(c, "airframe")
	if err != nil {
		s.fail(c, err)
		return
	}
	if _, err := s.db.Airframe(c.Request.Context(), id); err != nil {
		s.fail(c, err)
		return
	}
	v, err := s.health.Airframe(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.JSON(http.StatusOK, v)
}

type packCheckInput struct {
	At          *time.Time `json:"at"`
	Kind        string     `json:"kind"`
	MahIn       *float64   `json:"mah_in"`
	MahOut      *float64   `json:"mah_out"`
	RestVBefore *float64   `json:"rest_v_before"`
	RestVAfter  *float64   `json:"rest_v_after"`
	PackIRmOhm  *float64   `json:"pack_ir_mohm"`
	CellV       []float64  `json:"cell_v"`
	CellIRmOhm  []float64  `json:"cell_ir_mohm"`
	Notes       string     `json:"notes"`
}

// createPackCheck records a charge, storage or capacity-test record of a
// pack and refreshes its health.
func (s *Server) createPackCheck(c *gin.Context) {
	id, err := pathID(c, "part")
	if err != nil {
		s.fail(c, err)
		return
	}
	var in packCheckInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	pc := &store.PackCheck{PartID: id, Kind: in.Kind, MahIn: in.MahIn, MahOut: in.MahOut, RestVBefore: in.RestVBefore,
		RestVAfter: in.RestVAfter, PackIRmOhm: in.PackIRmOhm, CellV: in.CellV, CellIRmOhm: in.CellIRmOhm, Notes: in.Notes,
		At: time.Now()}
	if in.At != nil {
		pc.At = *in.At
	}
	out, err := s.db.CreatePackCheck(c.Request.Context(), pc)
	if err != nil {
		s.fail(c, err)
		return
	}
	if _, err := s.health.Part(c.Request.Context(), id); err != nil {
		s.log.Error("health refresh after pack check", "part", id, "err", err)
	}
	s.afterRecord(c.Request.Context(), "", []string{id}, out.At)
	c.JSON(http.StatusCreated, out)
}

func (s *Server) listPackChecks(c *gin.Context) {
	id, err := pathID(c, "part")
	if err != nil {
		s.fail(c, err)
		return
	}
	if _, err := s.db.Part(c.Request.Context(), id); err != nil {
		s.fail(c, err)
		return
	}
	list, err := s.db.PackChecks(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, "")
}
