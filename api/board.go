package api

import (
	"net/http"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/web"
)

// The board's pages: each handler loads its data through the store,
// schedule and health packages (the same calls the API makes) in a few
// queries and hands it to web to render. Query counts below include the
// session lookup.

// boardFleet is the fleet page: 2 round trips (the session; every
// airframe's readiness facts, the active notices, open discrepancies,
// totals and open events pipelined as one batch); with notices active,
// their compliance facts too, as on the readiness route.
func (s *Server) boardFleet(c *gin.Context) {
	all, fn, err := s.prog.FleetReadinessNow(c.Request.Context())
	if err != nil {
		s.boardFail(c, err)
		return
	}
	s.renderPage(c, http.StatusOK, web.Page{Name: "fleet", Title: "Fleet",
		Data: web.FleetPage(all, fn.Totals, fn.OpenEvents, c.Query("model"), c.Query("status"))})
}

// boardAirframe is the airframe page: 14 queries (session, airframe, layout,
// readiness 5, fitment, health views of the fitted parts, due items, recent
// flights, trends computed as the trends route does: read and store).
func (s *Server) boardAirframe(c *gin.Context) {
	ctx := c.Request.Context()
	a, err := s.db.AirframeByCode(ctx, c.Param("code"))
	if err != nil {
		s.boardFail(c, err)
		return
	}
	in := web.AirframeInput{Airframe: a}
	if in.Layout, err = s.db.Layout(ctx, a.Layout); err != nil {
		s.boardFail(c, err)
		return
	}
	if in.Readiness, err = s.prog.Readiness(ctx, a.ID, nil); err != nil {
		s.boardFail(c, err)
		return
	}
	if in.Fitment, err = s.db.Fitment(ctx, a.ID, time.Now()); err != nil {
		s.boardFail(c, err)
		return
	}
	ids := make([]string, len(in.Fitment.Parts))
	for i, p := range in.Fitment.Parts {
		ids[i] = p.PartID
	}
	if in.Health, err = s.db.PartHealthViews(ctx, ids); err != nil {
		s.boardFail(c, err)
		return
	}
	if in.Due, err = s.db.DueItems(ctx, store.DueFilter{AirframeID: a.ID}); err != nil {
		s.boardFail(c, err)
		return
	}
	if in.Flights, err = s.db.RecentFlights(ctx, a.ID, 15); err != nil {
		s.boardFail(c, err)
		return
	}
	if in.Trends, err = s.health.Airframe(ctx, a.ID); err != nil {
		s.boardFail(c, err)
		return
	}
	d, err := web.AirframePage(in)
	if err != nil {
		s.boardFail(c, err)
		return
	}
	s.renderPage(c, http.StatusOK, web.Page{Name: "airframe", Title: a.Code, Data: d})
}

// boardPart is the part page: 8 to 14 queries (session, part, the health
// view computed as the health route does, history 4, work records, and a
// pack's checks).
func (s *Server) boardPart(c *gin.Context) {
	ctx := c.Request.Context()
	id, err := pathID(c, "part")
	if err != nil {
		s.boardFail(c, fleet.Errorf(fleet.ENOTFOUND, "no such part"))
		return
	}
	h, err := s.db.PartHistory(ctx, id)
	if err != nil {
		s.boardFail(c, err)
		return
	}
	p := h.Part
	var view *health.View
	var checks []store.PackCheck
	switch p.Kind {
	case fleet.KindMotor, fleet.KindPropeller, fleet.KindPack:
		if view, err = s.health.Part(ctx, id); err != nil {
			s.boardFail(c, err)
			return
		}
	}
	if p.Kind == fleet.KindPack {
		if checks, err = s.db.PackChecks(ctx, id); err != nil {
			s.boardFail(c, err)
			return
		}
	}
	work, _, err := s.db.WorkRecords(ctx, store.WorkFilter{PartID: id}, store.Page{Limit: store.MaxPageSize})
	if err != nil {
		s.boardFail(c, err)
		return
	}
	d, err := web.PartPage(p, view, h, work, checks, time.Now().UTC())
	if err != nil {
		s.boardFail(c, err)
		return
	}
	s.renderPage(c, http.StatusOK, web.Page{Name: "part", Title: string(p.Kind) + " " + p.Serial, Data: d})
}
