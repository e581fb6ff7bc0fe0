package api

import (
	"net/http"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

type keyInput struct {
	Name   string     `json:"name"`
	Person string     `json:"person"` // who holds it; the name when not given
	Role   fleet.Role `json:"role"`
}

// createdKey carries the token, shown this once and never again.
type createdKey struct {
	*fleet.APIKey
	Token string `json:"token"`
}

func (s *Server) createKey(c *gin.Context) {
	var in keyInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	if in.Person == "" {
		in.Person = in.Name
	}
	k, token, err := s.db.CreatePersonKey(c.Request.Context(), in.Name, in.Person, in.Role)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.Header("Cache-Control", "no-store")
	c.JSON(http.StatusCreated, createdKey{APIKey: k, Token: token})
}

func (s *Server) listKeys(c *gin.Context) {
	list, err := s.db.Keys(c.Request.Context())
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, "")
}

func (s *Server) revokeKey(c *gin.Context) {
	id, err := pathID(c, "key")
	if err != nil {
		s.fail(c, err)
		return
	}
	heard := s.keys.expect(id)
	defer s.keys.forget(id)
	k, err := s.db.RevokeKey(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	s.keys.revoked(heard)
	c.JSON(http.StatusOK, k)
}

func (s *Server) listAudit(c *gin.Context) {
	p, err := pageOf(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	list, next, err := s.db.Audit(c.Request.Context(), store.AuditFilter{Entity: c.Query("entity"), EntityID: c.Query("entity_id")}, p)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, next)
}
