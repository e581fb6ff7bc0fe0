package web

import (
	"sort"
	"strings"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

// FleetRow is one airframe on the fleet page.
type FleetRow struct {
	Airframe   *fleet.Airframe
	Ready      bool
	Blockers   []string // in short words
	Warnings   int
	Totals     store.AirframeTotals
	NextDue    *fleet.DueItem
	OpenEvents int
}

// FleetData is the fleet page.
type FleetData struct {
	Rows          []FleetRow
	Models        []string
	Model, Status string // the filters applied
	Total, Ready  int    // over the whole fleet, before filtering
	NotReady      int
}

// Fleet status filters.
const (
	FilterMayFly    = "may-fly"
	FilterMayNotFly = "may-not-fly"
	FilterRetired   = "retired"
)

// FleetPage builds the fleet page: one row per airframe, those that may not
// fly first (retired last), filtered by model and status.
func FleetPage(all []schedule.AirframeReadiness, totals map[string]store.AirframeTotals, open map[string]int,
	model, status string) FleetData {
	d := FleetData{Model: model, Status: status}
	models := map[string]bool{}
	for _, ar := range all {
		a := ar.Facts.Airframe
		models[a.Model] = true
		retired := a.RetiredAt != nil
		if !retired {
			d.Total++
			if ar.Readiness.Ready {
				d.Ready++
			} else {
				d.NotReady++
			}
		}
		if model != "" && a.Model != model {
			continue
		}
		switch status {
		case FilterMayFly:
			if !ar.Readiness.Ready || retired {
				continue
			}
		case FilterMayNotFly:
			if ar.Readiness.Ready || retired {
				continue
			}
		case FilterRetired:
			if !retired {
				continue
			}
		}
		row := FleetRow{Airframe: a, Ready: ar.Readiness.Ready, Warnings: len(ar.Readiness.Warnings),
			Totals: totals[a.ID], OpenEvents: open[a.ID]}
		for _, b := range ar.Readiness.Blockers {
			row.Blockers = append(row.Blockers, ShortWords(b))
		}
		if len(ar.Facts.Due) > 0 {
			row.NextDue = ar.Facts.Due[0] // most urgent first
		}
		d.Rows = append(d.Rows, row)
	}
	rank := func(r FleetRow) int {
		switch {
		case r.Airframe.RetiredAt != nil:
			return 2
		case r.Ready:
			return 1
		}
		return 0
	}
	sort.SliceStable(d.Rows, func(i, j int) bool {
		if a, b := rank(d.Rows[i]), rank(d.Rows[j]); a != b {
			return a < b
		}
		return d.Rows[i].Airframe.Code < d.Rows[j].Airframe.Code
	})
	for m := range models {
		d.Models = append(d.Models, m)
	}
	sort.Strings(d.Models)
	return d
}

// ShortWords says a readiness item in a few words for a table cell; the
// airframe page gives the full message.
func ShortWords(it fleet.ReadinessItem) string {
	switch it.Code {
	case fleet.ReadyOverdueGrounding:
		return "overdue: " + it.Subject
	case fleet.ReadyUnresolvedEvent:
		// "unresolved hard_landing of ..." -> "open hard landing"
		if f := strings.Fields(it.Message); len(f) > 1 {
			return "open " + strings.ReplaceAll(f[1], "_", " ")
		}
		return "open event"
	case fleet.ReadyEmptyPosition:
		_, pos, _ := strings.Cut(it.Subject, "/")
		return "empty " + pos
	case fleet.ReadyRotationMismatch:
		return "wrong rotation: " + it.Subject
	case fleet.ReadyAirframeHeld:
		return "held"
	case fleet.ReadyAirframeRetired:
		return "retired"
	}
	return strings.ReplaceAll(it.Code, "_", " ") + ": " + it.Subject
}
