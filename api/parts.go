package api

import (
	"net/http"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// partWritable are the members a client may change on a part; the kind is
// set once, on creation.
var partWritable = []string{"serial", "part_number", "lot", "maker", "acquired_on", "mass_g", "status",
	"retired_reason", "specs", "notes"}

func (s *Server) createPart(c *gin.Context) {
	var p fleet.Part
	// software_version is set on creation; later only an update work record
	// changes it, so that its history is kept.
	if err := s.decodeWritable(c, &p, append(partWritable, "kind", "software_version")...); err != nil {
		s.fail(c, err)
		return
	}
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
		return applyMergePatch(body, p, partWritable...)
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
