package api

import (
	"net/http"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// monthlyReport summarises a calendar month (UTC) per airframe, as JSON or,
// with ?format=csv, one spreadsheet row per airframe and a total row.
func (s *Server) monthlyReport(c *gin.Context) {
	from, err := time.Parse("2006-01", c.Query("month"))
	if err != nil {
		s.fail(c, fleet.FieldError("month", "give the month as YYYY-MM, e.g. 2026-11"))
		return
	}
	format := c.DefaultQuery("format", "json")
	if format != "json" && format != "csv" {
		s.fail(c, fleet.FieldError("format", "must be json or csv"))
		return
	}
	rep, err := s.db.Monthly(c.Request.Context(), from.UTC())
	if err != nil {
		s.fail(c, err)
		return
	}
	if format == "json" {
		c.JSON(http.StatusOK, rep)
		return
	}
	c.Header("Content-Type", "text/csv; charset=utf-8")
	c.Header("Content-Disposition", `attachment; filename="monthly-`+rep.Month+`.csv"`)
	c.Status(http.StatusOK)
	w := newCSV(c.Writer)
	head := []string{"month", "airframe", "model", "flights", "flight_hours", "flown_not_ready", "work_records"}
	head = append(head, store.WorkActions...)
	head = append(head, "notices_complied", "events")
	head = append(head, fleet.EventKinds...)
	head = append(head, "discrepancies_found", "discrepancies_cleared")
	cells := make([]cell, len(head))
	for i, h := range head {
		cells[i] = text(h)
	}
	_ = w.row(cells...)
	count := func(n int) cell { return num(float64(n), 0) }
	for _, l := range append(rep.Airframes, rep.Total) {
		row := []cell{text(rep.Month), text(l.Airframe), text(l.Model), count(l.Flights), num(l.FlightHours, 2),
			count(l.FlownNotReady), count(l.WorkRecords)}
		for _, a := range store.WorkActions {
			row = append(row, count(l.Maintenance[a]))
		}
		row = append(row, count(l.NoticesComplied), count(l.Events))
		for _, k := range fleet.EventKinds {
			row = append(row, count(l.EventsByKind[k]))
		}
		row = append(row, count(l.DiscrepanciesFound), count(l.DiscrepanciesCleared))
		_ = w.row(row...)
	}
	_ = w.flush()
}
