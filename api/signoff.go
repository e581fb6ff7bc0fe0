package api

import (
	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/store"
)

// partSoftware is a part's software history, newest first.
func (s *Server) partSoftware(c *gin.Context) {
	id, err := pathID(c, "part")
	if err != nil {
		s.fail(c, err)
		return
	}
	list, err := s.db.SoftwareHistory(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, "")
}

// listDiscrepancies lists the discrepancies work records found, open or
// cleared.
func (s *Server) listDiscrepancies(c *gin.Context) {
	p, err := pageOf(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	var f store.DiscrepancyFilter
	if f.AirframeID, err = queryID(c, "airframe_id"); err == nil {
		f.PartID, err = queryID(c, "part_id")
	}
	if err != nil {
		s.fail(c, err)
		return
	}
	if f.Open, err = queryBool(c, "open"); err != nil {
		s.fail(c, err)
		return
	}
	list, next, err := s.db.Discrepancies(c.Request.Context(), f, p)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, next)
}
