package api

import (
	"net/http"
	"strconv"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/web"
)

// planInput loads the planner's items: 3 queries (due items within the
// horizon, the airframes' codes; the session before).
func (s *Server) planInput(c *gin.Context) (days int, items []web.PlanItem, ok bool) {
	days = 90
	if v := c.Query("days"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil || (n != 30 && n != 90 && n != 180) {
			s.boardFail(c, fleet.FieldError("days", "must be 30, 90 or 180"))
			return 0, nil, false
		}
		days = n
	}
	now := time.Now().UTC()
	end := now.AddDate(0, 0, days)
	due, err := s.db.DueItems(c.Request.Context(), store.DueFilter{Before: &end})
	if err != nil {
		s.boardFail(c, err)
		return 0, nil, false
	}
	var ids []string
	for _, it := range due {
		if it.AirframeID != nil {
			ids = append(ids, *it.AirframeID)
		}
	}
	labels, err := s.db.LabelsOf(c.Request.Context(), ids, nil)
	if err != nil {
		s.boardFail(c, err)
		return 0, nil, false
	}
	return days, web.PlanItems(due, labels.Airframes, now, days), true
}

// boardPlan is the planner: 6 queries (session, due items, codes, and the
// spares forecast's 3).
func (s *Server) boardPlan(c *gin.Context) {
	days, items, ok := s.planInput(c)
	if !ok {
		return
	}
	spares, err := s.prog.PartsForecast(c.Request.Context(), days)
	if err != nil {
		s.boardFail(c, err)
		return
	}
	d, err := web.PlanPage(items, spares, time.Now().UTC(), days)
	if err != nil {
		s.boardFail(c, err)
		return
	}
	s.renderPage(c, http.StatusOK, web.Page{Name: "plan", Title: "Planner", Data: d})
}

// boardPlanCSV is the planner's list as CSV: 3 queries.
func (s *Server) boardPlanCSV(c *gin.Context) {
	days, items, ok := s.planInput(c)
	if !ok {
		return
	}
	c.Header("Content-Type", "text/csv; charset=utf-8")
	c.Header("Content-Disposition", `attachment; filename="plan-`+strconv.Itoa(days)+`d.csv"`)
	c.Status(http.StatusOK)
	w := newCSV(c.Writer)
	_ = w.row(text("week_start"), text("forecast_date"), text("status"), text("grounding"), text("airframe"),
		text("subject_kind"), text("subject"), text("part_number"), text("rule"), text("action"), text("reason"))
	for _, it := range items {
		week, date := "", ""
		if it.ForecastDate != nil {
			week, date = it.Week.Format(time.DateOnly), it.ForecastDate.UTC().Format(time.RFC3339)
		}
		pn := ""
		if it.PartNumber != nil {
			pn = *it.PartNumber
		}
		_ = w.row(text(week), text(date), text(it.Status), text(strconv.FormatBool(it.Grounding)), text(it.AirframeCode),
			text(it.SubjectKind), text(it.Subject), text(pn), text(it.RuleName), text(it.Action), text(it.Reason))
	}
	if err := w.flush(); err != nil {
		s.log.Info("plan CSV not fully written", "err", err)
	}
}

// boardQueue is the work queue: 7 queries (session, overdue, due soon, rules,
// open events, labels, packs to check).
func (s *Server) boardQueue(c *gin.Context) {
	ctx := c.Request.Context()
	overdue, err := s.db.DueItems(ctx, store.DueFilter{Status: fleet.DueOverdue})
	if err != nil {
		s.boardFail(c, err)
		return
	}
	soon, err := s.db.DueItems(ctx, store.DueFilter{Status: fleet.DueSoon})
	if err != nil {
		s.boardFail(c, err)
		return
	}
	rules, err := s.db.Rules(ctx)
	if err != nil {
		s.boardFail(c, err)
		return
	}
	open := true
	events, _, err := s.db.Events(ctx, store.EventFilter{Open: &open}, store.Page{Limit: store.MaxPageSize})
	if err != nil {
		s.boardFail(c, err)
		return
	}
	var afs, parts []string
	for _, it := range append(overdue, soon...) {
		if it.AirframeID != nil {
			afs = append(afs, *it.AirframeID)
		}
	}
	for _, e := range events {
		if e.AirframeID != nil {
			afs = append(afs, *e.AirframeID)
		}
		if e.PartID != nil {
			parts = append(parts, *e.PartID)
		}
	}
	labels, err := s.db.LabelsOf(ctx, afs, parts)
	if err != nil {
		s.boardFail(c, err)
		return
	}
	packs, err := s.db.PacksNeedingAttention(ctx)
	if err != nil {
		s.boardFail(c, err)
		return
	}
	d := web.QueuePage(append(overdue, soon...), rules, events, labels, labels.Airframes, packs)
	s.renderPage(c, http.StatusOK, web.Page{Name: "queue", Title: "Work queue", Data: d})
}

// boardCheck is the field check: 3 queries to choose (session, airframes,
// packs of its cell count), plus the readiness route's (5, and 4 per pack)
// to answer.
func (s *Server) boardCheck(c *gin.Context) {
	ctx := c.Request.Context()
	all, _, err := s.db.Airframes(ctx, store.AirframeFilter{}, store.Page{Limit: store.MaxPageSize})
	if err != nil {
		s.boardFail(c, err)
		return
	}
	var a *fleet.Airframe
	if code := c.Query("airframe"); code != "" {
		for _, x := range all {
			if x.Code == code {
				a = x
			}
		}
		if a == nil {
			s.boardFail(c, fleet.Errorf(fleet.ENOTFOUND, "no airframe %s", code))
			return
		}
	}
	var packs []store.PackChoice
	var chosen []string
	var rd *fleet.Readiness
	if a != nil {
		if packs, err = s.db.PacksOfCells(ctx, a.CellsS); err != nil {
			s.boardFail(c, err)
			return
		}
		for _, p := range c.QueryArray("pack") {
			id, err := store.ParseID("pack", p)
			if err != nil {
				s.boardFail(c, err)
				return
			}
			chosen = append(chosen, id)
		}
		if c.Query("ask") != "" {
			if rd, err = s.prog.Readiness(ctx, a.ID, chosen); err != nil {
				s.boardFail(c, err)
				return
			}
		}
	}
	s.renderPage(c, http.StatusOK, web.Page{Name: "check", Title: "Field check", Data: web.CheckPage(all, a, packs, chosen, rd)})
}

// boardJob is the job page: 6 queries (session, job by code, the manifest's 4).
func (s *Server) boardJob(c *gin.Context) {
	m, ok := s.jobManifestByCode(c)
	if !ok {
		return
	}
	s.renderPage(c, http.StatusOK, web.Page{Name: "job", Title: "Job " + m.Job.Code, Data: web.JobPage(m)})
}

// boardJobCSV is the job's manifest as CSV, the same as the API's.
func (s *Server) boardJobCSV(c *gin.Context) {
	if m, ok := s.jobManifestByCode(c); ok {
		s.writeManifestCSV(c, m)
	}
}

func (s *Server) jobManifestByCode(c *gin.Context) (*store.Manifest, bool) {
	j, err := s.db.JobByCode(c.Request.Context(), c.Param("code"))
	if err != nil {
		s.boardFail(c, err)
		return nil, false
	}
	m, err := s.db.Manifest(c.Request.Context(), j.ID)
	if err != nil {
		s.boardFail(c, err)
		return nil, false
	}
	return m, true
}

// boardFlight is the flight page: 9 queries (session, the flight route's 6,
// the airframe's code, the job).
func (s *Server) boardFlight(c *gin.Context) {
	ctx := c.Request.Context()
	id, err := pathID(c, "flight")
	if err != nil {
		s.boardFail(c, fleet.Errorf(fleet.ENOTFOUND, "no such flight"))
		return
	}
	f, err := s.db.FlightDetail(ctx, id)
	if err != nil {
		s.boardFail(c, err)
		return
	}
	labels, err := s.db.LabelsOf(ctx, []string{f.AirframeID}, nil)
	if err != nil {
		s.boardFail(c, err)
		return
	}
	job := ""
	if f.JobID != nil {
		j, err := s.db.Job(ctx, *f.JobID)
		if err != nil {
			s.boardFail(c, err)
			return
		}
		job = j.Code
	}
	s.renderPage(c, http.StatusOK, web.Page{Name: "flight", Title: "Flight", Data: web.FlightPage(f, labels.Airframes[f.AirframeID], job)})
}
