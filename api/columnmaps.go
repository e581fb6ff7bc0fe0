package api

import (
	"net/http"
	"strconv"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
)

// mapWritable are the members a technician may set on a column map.
var mapWritable = []string{"name", "delimiter", "header_row", "time", "columns", "detect"}

func (s *Server) createColumnMap(c *gin.Context) {
	var m fleet.ColumnMap
	if err := s.decodeWritable(c, &m, mapWritable...); err != nil {
		s.fail(c, err)
		return
	}
	out, err := s.db.CreateColumnMap(c.Request.Context(), &m)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.Header("Location", "/v1/column-maps/"+out.ID)
	writeOne(c, http.StatusCreated, out.Version, out)
}

func (s *Server) listColumnMaps(c *gin.Context) {
	list, err := s.db.ColumnMaps(c.Request.Context())
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, "")
}

// getColumnMap returns a map's current version, or with ?version=N the map
// as it was then (the version a flight's log was read through).
func (s *Server) getColumnMap(c *gin.Context) {
	v := c.Query("version")
	if v == "" {
		getOne(s, c, "column map", s.db.ColumnMap)
		return
	}
	n, err := strconv.Atoi(v)
	if err != nil || n < 1 {
		s.fail(c, fleet.FieldError("version", "must be a positive whole number"))
		return
	}
	id, err := pathID(c, "column map")
	if err != nil {
		s.fail(c, err)
		return
	}
	m, err := s.db.ColumnMapVersion(c.Request.Context(), id, n)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeOne(c, http.StatusOK, m.Version, m)
}

func (s *Server) patchColumnMap(c *gin.Context) {
	id, version, body, ok := s.patchInput(c, "column map")
	if !ok {
		return
	}
	m, err := s.db.UpdateColumnMap(c.Request.Context(), id, version, func(m *fleet.ColumnMap) error {
		return applyMergePatch(body, m, mapWritable...)
	})
	if err != nil {
		s.fail(c, err)
		return
	}
	writeOne(c, http.StatusOK, m.Version, m)
}

func (s *Server) deleteColumnMap(c *gin.Context) {
	id, err := pathID(c, "column map")
	if err != nil {
		s.fail(c, err)
		return
	}
	version, err := ifMatch(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	if err := s.db.DeleteColumnMap(c.Request.Context(), id, version); err != nil {
		s.fail(c, err)
		return
	}
	c.Status(http.StatusNoContent)
}
