package fleet

import (
	"fmt"
	"math"
	"slices"
	"time"
)

// Span is the time range [From, To); nil From reaches back without limit,
// nil To is still open.
type Span struct {
	From *time.Time
	To   *time.Time
}

// Spans is a set of time ranges, sorted and disjoint once normalised.
type Spans []Span

func before(a, b *time.Time, nilIsLow bool) bool {
	switch {
	case a == nil && b == nil:
		return false
	case a == nil:
		return nilIsLow
	case b == nil:
		return !nilIsLow
	}
	return a.Before(*b)
}

// union merges ranges that overlap or touch.
func union(in Spans) Spans {
	var s Spans
	for _, x := range in {
		if x.From == nil || x.To == nil || x.From.Before(*x.To) {
			s = append(s, x)
		}
	}
	slices.SortFunc(s, func(a, b Span) int {
		if before(a.From, b.From, true) {
			return -1
		}
		if before(b.From, a.From, true) {
			return 1
		}
		return 0
	})
	var out Spans
	for _, x := range s {
		if n := len(out); n > 0 {
			last := &out[n-1]
			if last.To == nil || x.From == nil || !x.From.After(*last.To) {
				if last.To != nil && (x.To == nil || x.To.After(*last.To)) {
					last.To = x.To
				}
				continue
			}
		}
		out = append(out, x)
	}
	return out
}

// intersect returns the moments in both a and b.
func intersect(a, b Spans) Spans {
	var out Spans
	for _, x := range a {
		for _, y := range b {
			from := x.From
			if before(from, y.From, true) {
				from = y.From
			}
			to := x.To
			if before(y.To, to, false) {
				to = y.To
			}
			if from == nil || to == nil || from.Before(*to) {
				out = append(out, Span{from, to})
			}
		}
	}
	return union(out)
}

// Contains reports whether t lies in the set.
func (s Spans) Contains(t time.Time) bool {
	for _, x := range s {
		if (x.From == nil || !t.Before(*x.From)) && (x.To == nil || t.Before(*x.To)) {
			return true
		}
	}
	return false
}

// FirstFrom is the earliest moment not before from that lies in the set, if
// it is not after until.
func (s Spans) FirstFrom(from, until time.Time) *time.Time {
	for _, x := range s {
		if x.To != nil && !x.To.After(from) {
			continue
		}
		t := from
		if x.From != nil && x.From.After(from) {
			t = *x.From
		}
		if t.After(until) {
			return nil
		}
		return &t
	}
	return nil
}

var always = Spans{{}}

// FitSpan is one stay of a part at an airframe.
type FitSpan struct {
	PartID, AirframeID string
	Kind               PartKind
	Span
}

// RegisterFacts is what applicability reads from the register over time:
// airframe models, fits, part kinds and numbers, and software histories.
type RegisterFacts struct {
	AirframeModel map[string]string
	PartKind      map[string]PartKind
	PartNumber    map[string]string
	Fits          []FitSpan
	Software      map[string][]SoftwareSpan
}

// versionSpans is when a part ran software in the range.
func (f *RegisterFacts) versionSpans(partID string, r SoftwareRange) Spans {
	var s Spans
	for _, v := range f.Software[partID] {
		if r.Covers(v.Version) {
			s = append(s, Span{v.From, v.To})
		}
	}
	return union(s)
}

// carried is when the airframe carried a part of the range's kind running
// software in the range.
func (f *RegisterFacts) carried(airframeID string, r SoftwareRange) Spans {
	var s Spans
	for _, fit := range f.Fits {
		if fit.AirframeID == airframeID && fit.Kind == r.PartKind {
			s = append(s, intersect(Spans{fit.Span}, f.versionSpans(fit.PartID, r))...)
		}
	}
	return union(s)
}

// Applicable returns when the notice applied to the subject ("airframe" or
// "part" and its id), by the register's history.
func (n *Notice) Applicable(subjectKind, id string, f *RegisterFacts) Spans {
	a := &n.Applicability
	kind, partKind := a.Subjects()
	if kind != subjectKind {
		return nil
	}
	if kind == "airframe" {
		model, ok := f.AirframeModel[id]
		if !ok || (len(a.AirframeModels) > 0 && !slices.Contains(a.AirframeModels, model)) {
			return nil
		}
		s := always
		for _, r := range a.Software {
			s = intersect(s, f.carried(id, r))
		}
		return s
	}
	if f.PartKind[id] != partKind || (len(a.PartNumbers) > 0 && !slices.Contains(a.PartNumbers, f.PartNumber[id])) {
		return nil
	}
	var stays []FitSpan
	for _, fit := range f.Fits {
		if fit.PartID == id {
			stays = append(stays, fit)
		}
	}
	s := always
	if len(a.AirframeModels) > 0 {
		var m Spans
		for _, st := range stays {
			if slices.Contains(a.AirframeModels, f.AirframeModel[st.AirframeID]) {
				m = append(m, st.Span)
			}
		}
		s = intersect(s, union(m))
	}
	for _, r := range a.Software {
		if r.PartKind == partKind {
			s = intersect(s, f.versionSpans(id, r))
			continue
		}
		var c Spans
		for _, st := range stays {
			c = append(c, intersect(Spans{st.Span}, f.carried(st.AirframeID, r))...)
		}
		s = intersect(s, union(c))
	}
	return s
}

// NoticeUse is a subject's use since its window opened, and its recent
// daily rates for forecasts.
type NoticeUse struct {
	Hours, Flights                         float64
	RecentHoursPerDay, RecentFlightsPerDay float64
}

// WindowState is where a subject stands in a notice's compliance window.
type WindowState struct {
	Start    time.Time    // when the window opened
	Usage    []LimitUsage // each limit used so far
	Fraction float64      // the largest used fraction
	Status   string       // ok, due_soon or overdue (Due* constants)
	Reason   string
	DueAt    *time.Time // the deadline when known (date or days), else the forecast
}

// WindowStart is when the window opens for a subject that first fell under
// the notice at applicableSince and was last complied with at lastDone (nil:
// never): a recurring notice restarts at each compliance.
func (n *Notice) WindowStart(applicableSince time.Time, lastDone *time.Time) time.Time {
	if n.Window.Recurring && lastDone != nil {
		return *lastDone
	}
	if n.Window.From == WindowFromApplicable {
		return applicableSince
	}
	return n.IssuedAt()
}

// Evaluate places the moment at in the window that opened at start, given
// the use since then.
func (w *NoticeWindow) Evaluate(start, at time.Time, use NoticeUse) WindowState {
	st := WindowState{Start: start, Usage: []LimitUsage{}}
	add := func(name string, used, max, perDay float64, deadline *time.Time) {
		lu := LimitUsage{Limit: name, Used: used, Max: max, Remaining: math.Max(0, max-used), Fraction: used / max}
		switch {
		case deadline != nil:
			lu.Forecast = deadline
		case lu.Fraction >= 1:
			lu.Forecast = &at
		case perDay > 0:
			t := at.Add(time.Duration(lu.Remaining / perDay * 24 * float64(time.Hour)))
			lu.Forecast = &t
		}
		st.Usage = append(st.Usage, lu)
	}
	if w.DueOn != nil {
		d, _ := time.Parse(time.DateOnly, *w.DueOn)
		end := d.Add(24 * time.Hour) // by the end of the day
		total := end.Sub(start).Hours() / 24
		used := at.Sub(start).Hours() / 24
		if total <= 0 { // a date before the window opened: due at once
			total, used = 1, 1
		}
		add("due_on", used, total, 0, &end)
	}
	if w.FlightHours != nil {
		add("flight_hours", use.Hours, *w.FlightHours, use.RecentHoursPerDay, nil)
	}
	if w.Flights != nil {
		add("flights", use.Flights, float64(*w.Flights), use.RecentFlightsPerDay, nil)
	}
	if w.Days != nil {
		end := start.Add(time.Duration(*w.Days) * 24 * time.Hour)
		add("days", at.Sub(start).Hours()/24, float64(*w.Days), 0, &end)
	}
	for _, lu := range st.Usage {
		if lu.Fraction > st.Fraction || st.Reason == "" {
			st.Fraction = math.Max(st.Fraction, lu.Fraction)
			st.Reason = fmt.Sprintf("%s %.4g of %.4g since %s", lu.Limit, lu.Used, lu.Max, start.UTC().Format(time.DateOnly))
		}
		if lu.Forecast != nil && (st.DueAt == nil || lu.Forecast.Before(*st.DueAt)) {
			st.DueAt = lu.Forecast
		}
	}
	switch {
	case st.Fraction >= 1:
		st.Status = DueOverdue
	case st.Fraction >= w.WarnAt:
		st.Status = DueSoon
	default:
		st.Status = DueOK
	}
	return st
}

// Compliance is where one subject stands with one notice.
type Compliance struct {
	NoticeID        string     `json:"notice_id"`
	Reference       string     `json:"reference"`
	Category        string     `json:"category"`
	SubjectKind     string     `json:"subject_kind"`
	SubjectID       string     `json:"subject_id"`
	Subject         string     `json:"subject"` // tail code or serial
	AirframeID      *string    `json:"airframe_id"`
	Status          string     `json:"status"` // open, complied or not_applicable
	ApplicableSince *time.Time `json:"applicable_since"`
	// The latest work record naming the notice for this subject.
	CompliedAt   *time.Time `json:"complied_at"`
	WorkRecordID *string    `json:"work_record_id"`
	// A decision that the notice does not apply.
	Reason    *string    `json:"reason"`
	DecidedBy *string    `json:"decided_by"`
	DecidedAt *time.Time `json:"decided_at"`
	// The window (open, and recurring complied): where the subject stands.
	WindowStart *time.Time   `json:"window_start"`
	Usage       []LimitUsage `json:"usage"`
	Fraction    float64      `json:"fraction"`
	DueStatus   *string      `json:"due_status"` // ok, due_soon, overdue
	DueReason   string       `json:"due_reason"`
	DueAt       *time.Time   `json:"due_at"`
}
