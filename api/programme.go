package api

import (
	"context"
	"net/http"
	"strconv"
	"strings"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
)

// ruleWritable are the members an admin may set on a service rule.
var ruleWritable = []string{"name", "description", "applies_to", "part_number", "model", "flight_hours", "flights",
	"days", "revolutions", "bearing_pct", "cycles", "soh_below_pct", "ir_rise_pct", "efficiency_rise_pct",
	"vibration_rise_pct", "on_events", "warn_at", "grounding", "action", "enabled"}

func (s *Server) createRule(c *gin.Context) {
	r := fleet.ServiceRule{WarnAt: 0.9, Enabled: true}
	if err := s.decodeWritable(c, &r, ruleWritable...); err != nil {
		s.fail(c, err)
		return
	}
	out, err := s.db.CreateRule(c.Request.Context(), &r)
	if err != nil {
		s.fail(c, err)
		return
	}
	s.recomputeFleet(c.Request.Context())
	c.Header("Location", "/v1/service-rules/"+out.ID)
	writeOne(c, http.StatusCreated, out.Version, out)
}

func (s *Server) listRules(c *gin.Context) {
	list, err := s.db.Rules(c.Request.Context())
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, "")
}

func (s *Server) getRule(c *gin.Context) { getOne(s, c, "service rule", s.db.Rule) }

func (s *Server) patchRule(c *gin.Context) {
	id, version, body, ok := s.patchInput(c, "service rule")
	if !ok {
		return
	}
	r, err := s.db.UpdateRule(c.Request.Context(), id, version, func(r *fleet.ServiceRule) error {
		return applyMergePatch(body, r, ruleWritable...)
	})
	if err != nil {
		s.fail(c, err)
		return
	}
	s.recomputeFleet(c.Request.Context())
	writeOne(c, http.StatusOK, r.Version, r)
}

func (s *Server) deleteRule(c *gin.Context) {
	id, err := pathID(c, "service rule")
	if err != nil {
		s.fail(c, err)
		return
	}
	version, err := ifMatch(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	if err := s.db.DeleteRule(c.Request.Context(), id, version); err != nil {
		s.fail(c, err)
		return
	}
	c.Status(http.StatusNoContent)
}

type workInput struct {
	At            *time.Time `json:"at"`
	AirframeID    *string    `json:"airframe_id"`
	PartID        *string    `json:"part_id"`
	RuleID        *string    `json:"rule_id"`
	Action        string     `json:"action"`
	Work          string     `json:"work"`
	PerformedBy   string     `json:"performed_by"`
	ApprovedBy    *string    `json:"approved_by"`
	RemovedPartID *string    `json:"removed_part_id"`
	FittedPartID  *string    `json:"fitted_part_id"`
	Resolves      []string   `json:"resolves"`
	CorrectsID    *string    `json:"corrects_id"`
	// sign-off (14 CFR 43.9 / 43.11) and software updates
	CertificateNumber *string            `json:"certificate_number"`
	CertificateKind   *string            `json:"certificate_kind"`
	ReturnToService   *string            `json:"return_to_service"`
	Discrepancies     []discrepancyInput `json:"discrepancies"`
	Clears            []string           `json:"clears"`
	SoftwareFrom      *string            `json:"software_from"`
	SoftwareTo        *string            `json:"software_to"`
	NoticeID          *string            `json:"notice_id"`
}

// discrepancyInput is one discrepancy a work record found.
type discrepancyInput struct {
	Description string  `json:"description"`
	Grounding   bool    `json:"grounding"`
	PartID      *string `json:"part_id"`
}

// createWorkRecord records work; a replacement swaps the part in the same
// transaction, and the airframe's due list is recomputed at once.
func (s *Server) createWorkRecord(c *gin.Context) {
	var in workInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	w := &fleet.WorkRecord{Action: in.Action, Work: in.Work, PerformedBy: in.PerformedBy, ApprovedBy: in.ApprovedBy,
		CertificateNumber: in.CertificateNumber, CertificateKind: in.CertificateKind, ReturnToService: in.ReturnToService,
		SoftwareFrom: in.SoftwareFrom, SoftwareTo: in.SoftwareTo}
	if in.At != nil {
		w.At = *in.At
	}
	var err error
	for _, f := range []struct {
		name string
		in   *string
		out  **string
	}{{"airframe_id", in.AirframeID, &w.AirframeID}, {"part_id", in.PartID, &w.PartID}, {"rule_id", in.RuleID, &w.RuleID},
		{"removed_part_id", in.RemovedPartID, &w.RemovedPartID}, {"fitted_part_id", in.FittedPartID, &w.FittedPartID},
		{"corrects_id", in.CorrectsID, &w.CorrectsID}, {"notice_id", in.NoticeID, &w.NoticeID}} {
		if *f.out, err = optionalID(f.name, f.in); err != nil {
			s.fail(c, err)
			return
		}
	}
	for i, ev := range in.Resolves {
		id, err := store.ParseID("resolves["+strconv.Itoa(i)+"]", ev)
		if err != nil {
			s.fail(c, err)
			return
		}
		w.Resolves = append(w.Resolves, id)
	}
	for i, cl := range in.Clears {
		id, err := store.ParseID("clears["+strconv.Itoa(i)+"]", cl)
		if err != nil {
			s.fail(c, err)
			return
		}
		w.Clears = append(w.Clears, id)
	}
	for i, d := range in.Discrepancies {
		part, err := optionalID("discrepancies["+strconv.Itoa(i)+"].part_id", d.PartID)
		if err != nil {
			s.fail(c, err)
			return
		}
		w.Discrepancies = append(w.Discrepancies, &fleet.Discrepancy{Description: d.Description, Grounding: d.Grounding, PartID: part})
	}
	ctx := c.Request.Context()
	out, err := s.db.CreateWorkRecord(ctx, w)
	if err != nil {
		s.fail(c, err)
		return
	}
	// The record may be back-dated: flights since it were judged without it.
	var parts []string
	for _, p := range []*string{out.PartID, out.RemovedPartID, out.FittedPartID} {
		if p != nil {
			parts = append(parts, *p)
		}
	}
	if out.AirframeID != nil {
		s.afterRecord(ctx, *out.AirframeID, parts, out.At)
	} else {
		s.afterRecord(ctx, "", parts, out.At)
		s.recomputeFleet(ctx)
	}
	for _, id := range out.Resolves {
		// An event it resolves was open until then on its own airframe or part.
		if e, err := s.db.Event(ctx, id); err == nil && (e.AirframeID == nil || out.AirframeID == nil || *e.AirframeID != *out.AirframeID) {
			s.afterEvent(ctx, e, out.At)
		}
	}
	c.Header("Location", "/v1/work-records?id="+out.ID)
	c.JSON(http.StatusCreated, out)
}

func (s *Server) listWorkRecords(c *gin.Context) {
	p, err := pageOf(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	var f store.WorkFilter
	for _, q := range []struct {
		name string
		dst  *string
	}{{"airframe_id", &f.AirframeID}, {"part_id", &f.PartID}, {"rule_id", &f.RuleID}} {
		if *q.dst, err = queryID(c, q.name); err != nil {
			s.fail(c, err)
			return
		}
	}
	list, next, err := s.db.WorkRecords(c.Request.Context(), f, p)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, next)
}

// listDue is the fleet due list with forecasts, most urgent first.
func (s *Server) listDue(c *gin.Context) {
	f := store.DueFilter{Status: c.Query("status")}
	switch f.Status {
	case "", fleet.DueOK, fleet.DueSoon, fleet.DueOverdue:
	default:
		s.fail(c, fleet.FieldError("status", "must be ok, due_soon or overdue"))
		return
	}
	var err error
	if f.AirframeID, err = queryID(c, "airframe"); err != nil {
		s.fail(c, err)
		return
	}
	if v := c.Query("within_days"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil || n < 0 || n > 3650 {
			s.fail(c, fleet.FieldError("within_days", "must be a whole number of days, 0 to 3650"))
			return
		}
		t := time.Now().Add(time.Duration(n) * 24 * time.Hour)
		f.Before = &t
	}
	items, err := s.db.DueItems(c.Request.Context(), f)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, items, "")
}

// readiness answers whether the airframe may fly now with the given packs
// (from the due list), or with ?at= whether it was ready at that moment
// (recomputed as of then).
func (s *Server) readiness(c *gin.Context) {
	id, err := pathID(c, "airframe")
	if err != nil {
		s.fail(c, err)
		return
	}
	packs, err := packList(c.Query("packs"))
	if err != nil {
		s.fail(c, err)
		return
	}
	at, err := queryTime(c, "at")
	if err != nil {
		s.fail(c, err)
		return
	}
	var rd *fleet.Readiness
	if at == nil {
		rd, err = s.prog.Readiness(c.Request.Context(), id, packs)
	} else if err = fleet.CheckTime("at", *at, time.Now()); err == nil {
		rd, err = s.prog.ReadinessAt(c.Request.Context(), id, packs, *at)
	}
	if err != nil {
		s.fail(c, err)
		return
	}
	c.JSON(http.StatusOK, rd)
}

func packList(q string) ([]string, error) {
	var out []string
	for i, p := range strings.Split(q, ",") {
		if p = strings.TrimSpace(p); p == "" {
			continue
		}
		id, err := store.ParseID("packs", p)
		if err != nil {
			return nil, fleet.FieldError("packs", "packs[%d] is not a UUID", i)
		}
		out = append(out, id)
	}
	return out, nil
}

func (s *Server) partsForecast(c *gin.Context) {
	days := 90
	if v := c.Query("days"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil || n < 1 || n > 730 {
			s.fail(c, fleet.FieldError("days", "must be 1 to 730"))
			return
		}
		days = n
	}
	f, err := s.prog.PartsForecast(c.Request.Context(), days)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.JSON(http.StatusOK, f)
}

// afterFlight brings verdicts and due lists up to date after a new flight
// (see schedule.Programme.AfterFlight); a failure is logged and repaired by
// the next record reaching those flights and the scheduled recompute.
func (s *Server) afterFlight(ctx context.Context, f *fleet.Flight, fresh *health.Refreshing) {
	start := time.Now()
	err := s.prog.AfterFlight(ctx, f, fresh)
	s.metrics.recompute("after_flight", start, err)
	if err != nil {
		s.log.Error("after a flight", "flight", f.ID, "err", err)
	}
}

// afterRecord does the same after a record taking effect at from on the
// airframe and parts (see schedule.Programme.AfterRecord).
func (s *Server) afterRecord(ctx context.Context, airframeID string, parts []string, from time.Time) {
	start := time.Now()
	err := s.prog.AfterRecord(ctx, airframeID, parts, from)
	s.metrics.recompute("after_record", start, err)
	if err != nil {
		s.log.Error("after a record", "airframe", airframeID, "parts", parts, "err", err)
	}
}

// recomputeFleet recomputes the whole due list after a programme change; a
// failure is logged and repaired by the scheduled recompute.
func (s *Server) recomputeFleet(ctx context.Context) {
	start := time.Now()
	_, err := s.prog.RecomputeFleet(ctx)
	s.metrics.recompute("fleet", start, err)
	if err != nil {
		s.log.Error("due recompute", "err", err)
	}
}
