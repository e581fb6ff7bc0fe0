package web

import (
	"encoding/json"
	"strings"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/wear"
)

// QueueItem is a due item on the work queue with what to do.
type QueueItem struct {
	*fleet.DueItem
	AirframeCode string
	ToDo         string
}

// QueueEvent is an open event with what to do.
type QueueEvent struct {
	*fleet.Event
	AirframeCode string
	PartSerial   string
	ToDo         string
}

// QueuePack is a pack whose health asks for a check.
type QueuePack struct {
	store.PackAttention
	Reasons []wear.Reason
	ToDo    string
}

// QueueData is the work queue.
type QueueData struct {
	Overdue, Soon []QueueItem
	Events        []QueueEvent
	Packs         []QueuePack
}

// actionToDo says what a rule's action asks of the technician (common
// practice; the operator's procedures and the maker's manuals govern).
var actionToDo = map[string]string{
	"inspect": "Inspect it as the operator's procedure says and record the work against the rule.",
	"replace": "Replace the part (a replace work record swaps it and resets the rule).",
	"service": "Service it per the maker's manual and record the work against the rule.",
	"retire":  "Take it out of service and record a retire work record.",
}

// eventToDo says what an open event asks for before it may be resolved.
var eventToDo = map[string]string{
	"hard_landing":    "Inspect arms, motor mounts, propellers and the landing gear; resolve with the inspection's work record.",
	"crash":           "Ground the airframe, inspect or repair it fully; resolve with the work record.",
	"prop_strike":     "Replace the struck propeller(s), check the motor and its mount; resolve with the work record.",
	"overdischarge":   "Check the pack's resting cell voltages and swelling before charging; quarantine it if in doubt.",
	"overcurrent":     "Check the pack, connectors and wiring for heat damage; review the flight's load.",
	"pack_swelling":   "Quarantine the pack at once: never charge or fly it; dispose of it as the maker and local rules say.",
	"overtemp":        "Check the part that ran hot and why before the next flight.",
	"firmware_change": "Confirm the configuration was checked and the change recorded.",
	"flown_not_ready": "Review why it flew while not ready and clear the blockers it flew with.",
	"note":            "Read it and resolve it when handled.",
}

// QueuePage builds the work queue: overdue and due-soon items (grounding
// first), open events, and packs needing a check, each with what to do.
func QueuePage(due []*fleet.DueItem, rules []*fleet.ServiceRule, events []*fleet.Event, labels store.Labels,
	codes map[string]string, packs []store.PackAttention) QueueData {
	var d QueueData
	desc := map[string]string{}
	for _, r := range rules {
		desc[r.ID] = strings.TrimSpace(r.Description)
	}
	for _, it := range due {
		qi := QueueItem{DueItem: it, ToDo: actionToDo[it.Action]}
		if it.AirframeID != nil {
			qi.AirframeCode = codes[*it.AirframeID]
		}
		if it.RuleID == nil {
			qi.ToDo = "Comply with the notice and record the work." // an open notice's item
		} else if s := desc[*it.RuleID]; s != "" {
			qi.ToDo = s + " " + qi.ToDo
		}
		switch it.Status {
		case fleet.DueOverdue:
			d.Overdue = append(d.Overdue, qi)
		case fleet.DueSoon:
			d.Soon = append(d.Soon, qi)
		}
	}
	// Grounding items first; the store's order (by forecast) within.
	stable := func(items []QueueItem) {
		var g, rest []QueueItem
		for _, it := range items {
			if it.Grounding {
				g = append(g, it)
			} else {
				rest = append(rest, it)
			}
		}
		copy(items, append(g, rest...))
	}
	stable(d.Overdue)
	for _, e := range events {
		qe := QueueEvent{Event: e, ToDo: eventToDo[e.Kind]}
		if e.AirframeID != nil {
			qe.AirframeCode = labels.Airframes[*e.AirframeID]
		}
		if e.PartID != nil {
			qe.PartSerial = labels.Parts[*e.PartID]
		}
		if qe.ToDo == "" {
			qe.ToDo = "Look into it and resolve it when handled."
		}
		d.Events = append(d.Events, qe)
	}
	for _, p := range packs {
		qp := QueuePack{PackAttention: p}
		var v health.View
		if json.Unmarshal(p.View, &v) == nil && v.Pack != nil {
			qp.Reasons = v.Pack.Reasons
		}
		switch p.Status {
		case "retire":
			qp.ToDo = "Take the pack out of service: discharge it to the maker's storage or disposal level and retire it."
		default:
			qp.ToDo = "Check the pack: rest voltages, cell balance and swelling; bring a pack held full to storage voltage."
		}
		d.Packs = append(d.Packs, qp)
	}
	return d
}
