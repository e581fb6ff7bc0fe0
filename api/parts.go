package api

import (
	"encoding/json"
	"net/http"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// partInput is what a client may set on a part.
type partInput struct {
	Kind          fleet.PartKind  `json:"kind"`
	Serial        string          `json:"serial"`
	PartNumber    string          `json:"part_number"`
	Lot           string          `json:"lot"`
	Maker         string          `json:"maker"`
	AcquiredOn    *string         `json:"acquired_on"`
	MassG         *float64        `json:"mass_g"`
	Status        string          `json:"status"`
	RetiredReason *string         `json:"retired_reason"`
	Specs         json.RawMessage `json:"specs"`
	Notes         string          `json:"notes"`
}

var partWritable = []string{"serial", "part_number", "lot", "maker", "acquired_on", "mass_g", "status",
	"retired_reason", "specs", "notes"}

func (in *partInput) apply(p *fleet.Part) {
	p.Kind, p.Serial, p.PartNumber, p.Lot, p.Maker = in.Kind, in.Serial, in.PartNumber, in.Lot, in.Maker
	p.AcquiredOn, p.MassG, p.Status, p.RetiredReason = in.AcquiredOn, in.MassG, in.Status, in.RetiredReason
	p.Specs, p.Notes = in.Specs, in.Notes
}

func (s *Server) createPart(c *gin.Context) {
	var in partInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	var p fleet.Part
	in.apply(&p)
	out, err := s.db.CreatePart(c.Request.Context(), &p)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.Header("Location", "/v1/parts/"+out.ID)
	writeOne(c, http.StatusCreated, out.Version, out)
}

func (s *Server) listParts(c *gin.Context) {
	p, err := pageOf(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	f := store.PartFilter{Kind: c.Query("kind"), Status: c.Query("status"), PartNumber: c.Query("part_number"),
		Lot: c.Query("lot"), Serial: c.Query("serial")}
	list, next, err := s.db.Parts(c.Request.Context(), f, p)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, next)
}

func (s *Server) getPart(c *gin.Context) { getOne(s, c, "part", s.db.Part) }

func (s *Server) patchPart(c *gin.Context) {
	id, version, body, ok := s.patchInput(c, "part")
	if !ok {
		return
	}
	p, err := s.db.UpdatePart(c.Request.Context(), id, version, func(p *fleet.Part) error {
		in := partInput{Kind: p.Kind, Serial: p.Serial, PartNumber: p.PartNumber, Lot: p.Lot, Maker: p.Maker,
			AcquiredOn: p.AcquiredOn, MassG: p.MassG, Status: p.Status, RetiredReason: p.RetiredReason,
			Specs: p.Specs, Notes: p.Notes}
		if err := applyMergePatch(body, &in, partWritable...); err != nil {
			return err
		}
		in.apply(p)
		return nil
	})
	if err != nil {
		s.fail(c, err)
		return
	}
	writeOne(c, http.StatusOK, p.Version, p)
}

func (s *Server) partHistory(c *gin.Context) {
	id, err := pathID(c, "part")
	if err != nil {
		s.fail(c, err)
		return
	}
	h, err := s.db.PartHistory(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.JSON(http.StatusOK, h)
}

func (s *Server) trace(c *gin.Context) {
	lot, pn := c.Query("lot"), c.Query("part_number")
	if lot == "" && pn == "" {
		s.fail(c, fleet.FieldError("lot", "give lot or part_number"))
		return
	}
	t, err := s.db.Trace(c.Request.Context(), lot, pn)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.JSON(http.StatusOK, t)
}
