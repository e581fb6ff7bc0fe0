package fleet

import (
	"testing"
	"time"
)

// Version precedence against the examples of Semantic Versioning 2.0.0,
// section 11 (semver.org): 1.0.0 < 2.0.0 < 2.1.0 < 2.1.1, and
// 1.0.0-alpha < 1.0.0-alpha.1 < 1.0.0-alpha.beta < 1.0.0-beta <
// 1.0.0-beta.2 < 1.0.0-beta.11 < 1.0.0-rc.1 < 1.0.0.
func TestVersionPrecedenceSemVerSection11(t *testing.T) {
	chains := [][]string{
		{"1.0.0", "2.0.0", "2.1.0", "2.1.1"},
		{"1.0.0-alpha", "1.0.0-alpha.1", "1.0.0-alpha.beta", "1.0.0-beta", "1.0.0-beta.2", "1.0.0-beta.11", "1.0.0-rc.1", "1.0.0"},
	}
	for _, c := range chains {
		for i := 0; i+1 < len(c); i++ {
			a, _ := ParseVersion("v", c[i])
			b, _ := ParseVersion("v", c[i+1])
			if a.Compare(b) >= 0 || b.Compare(a) <= 0 {
				t.Errorf("%s should precede %s", c[i], c[i+1])
			}
		}
	}
	// Numeric, not textual, order; a missing patch is 0 (our reading of makers'
	// two-part versions, common practice).
	for _, p := range [][2]string{{"4.9.9", "4.10.0"}, {"4.2", "4.2.1"}} {
		a, _ := ParseVersion("v", p[0])
		b, _ := ParseVersion("v", p[1])
		if a.Compare(b) >= 0 {
			t.Errorf("%s should precede %s", p[0], p[1])
		}
	}
	if !SameVersion("4.2", "4.2.0") || SameVersion("4.2.0", "4.2.1") {
		t.Error("SameVersion")
	}
	if _, err := ParseVersion("software_version", "four point two"); err == nil {
		t.Error("a non-version was accepted")
	}
}

func TestSoftwareRangeCovers(t *testing.T) {
	min, below := "4.0.0", "4.2.0"
	r := SoftwareRange{PartKind: KindFlightController, Min: &min, Below: &below}
	for v, want := range map[string]bool{"3.9.9": false, "4.0.0": true, "4.1.7": true, "4.2.0-rc.1": true, "4.2.0": false, "4.10": false} {
		if got := r.Covers(v); got != want {
			t.Errorf("[4.0.0, 4.2.0) covers %s: %v, want %v", v, got, want)
		}
	}
}

func at(day int) *time.Time {
	t := time.Date(2026, 3, day, 0, 0, 0, 0, time.UTC)
	return &t
}

// Applicability by part number, airframe model and software range, over
// the register's history: the moments each criterion held, intersected.
func TestNoticeApplicability(t *testing.T) {
	fc, esc := KindFlightController, KindESC
	below := "4.2.0"
	f := &RegisterFacts{
		AirframeModel: map[string]string{"A1": "Surveyor 4", "A2": "Lifter 8"},
		PartKind:      map[string]PartKind{"FC1": fc, "FC2": fc, "E1": esc},
		PartNumber:    map[string]string{"FC1": "FC-7", "FC2": "FC-9", "E1": "ESC-40"},
		Fits: []FitSpan{
			{PartID: "FC1", AirframeID: "A1", Kind: fc, Span: Span{at(1), at(10)}},
			{PartID: "FC1", AirframeID: "A2", Kind: fc, Span: Span{at(12), nil}},
			{PartID: "FC2", AirframeID: "A1", Kind: fc, Span: Span{at(10), nil}},
			{PartID: "E1", AirframeID: "A1", Kind: esc, Span: Span{at(1), nil}},
		},
		Software: map[string][]SoftwareSpan{
			"FC1": {{Version: "4.1.0", To: at(5)}, {Version: "4.2.0", From: at(5)}},
			"FC2": {{Version: "4.0.3"}},
		},
	}
	fcNotice := func(a NoticeApplicability) *Notice { return &Notice{Applicability: a} }
	cases := []struct {
		name        string
		n           *Notice
		kind, id    string
		in, out     []int // days of March inside / outside the applicable spans
		notAtAllPtr bool
	}{
		{"part number", fcNotice(NoticeApplicability{PartKind: &fc, PartNumbers: []string{"FC-7"}}), "part", "FC1", []int{1, 20}, nil, false},
		{"other part number", fcNotice(NoticeApplicability{PartKind: &fc, PartNumbers: []string{"FC-7"}}), "part", "FC2", nil, nil, true},
		{"own software range", fcNotice(NoticeApplicability{PartKind: &fc, Software: []SoftwareRange{{PartKind: fc, Below: &below}}}),
			"part", "FC1", []int{1, 4}, []int{5, 20}, false},
		{"model while fitted", fcNotice(NoticeApplicability{PartKind: &fc, AirframeModels: []string{"Lifter 8"}}),
			"part", "FC1", []int{12, 25}, []int{1, 11}, false},
		{"airframe by model", fcNotice(NoticeApplicability{AirframeModels: []string{"Surveyor 4"}}), "airframe", "A1", []int{1, 28}, nil, false},
		{"airframe of another model", fcNotice(NoticeApplicability{AirframeModels: []string{"Surveyor 4"}}), "airframe", "A2", nil, nil, true},
		// The airframe carries a flight controller below 4.2.0: FC1 until
		// the 5th (4.1.0), none between the 5th and the 10th (FC1 at
		// 4.2.0), FC2 from the 10th (4.0.3).
		{"airframe carrying a controller in range", fcNotice(NoticeApplicability{Software: []SoftwareRange{{PartKind: fc, Below: &below}}}),
			"airframe", "A1", []int{1, 4, 10, 28}, []int{5, 9}, false},
		// An ESC on an airframe that carries a controller in range.
		{"part with another kind's range", fcNotice(NoticeApplicability{PartKind: &esc, Software: []SoftwareRange{{PartKind: fc, Below: &below}}}),
			"part", "E1", []int{2, 11}, []int{6}, false},
	}
	for _, c := range cases {
		s := c.n.Applicable(c.kind, c.id, f)
		if c.notAtAllPtr {
			if len(s) != 0 {
				t.Errorf("%s: applies %+v, want never", c.name, s)
			}
			continue
		}
		for _, d := range c.in {
			if !s.Contains(*at(d)) {
				t.Errorf("%s: does not apply on March %d", c.name, d)
			}
		}
		for _, d := range c.out {
			if s.Contains(*at(d)) {
				t.Errorf("%s: applies on March %d", c.name, d)
			}
		}
	}
	// First falling under it: the first moment in the spans from a given time.
	s := fcNotice(NoticeApplicability{Software: []SoftwareRange{{PartKind: fc, Below: &below}}}).Applicable("airframe", "A1", f)
	if got := s.FirstFrom(*at(6), *at(20)); got == nil || !got.Equal(*at(10)) {
		t.Errorf("first applicable from March 6: %v, want March 10", got)
	}
}

// Windows by date and by flight hours, with due soon at warn_at, and the
// recurring restart at the last compliance.
func TestNoticeWindow(t *testing.T) {
	due := "2026-03-20"
	w := NoticeWindow{DueOn: &due, WarnAt: 0.9}
	start := *at(1)
	if st := w.Evaluate(start, *at(10), NoticeUse{}); st.Status != DueOK || st.DueAt == nil || !st.DueAt.Equal(*at(21)) {
		t.Errorf("date window on March 10: %+v", st)
	}
	if st := w.Evaluate(start, *at(19), NoticeUse{}); st.Status != DueSoon { // 18 of 20 days = 0.9
		t.Errorf("date window on March 19: %s", st.Status)
	}
	if st := w.Evaluate(start, *at(21), NoticeUse{}); st.Status != DueOverdue {
		t.Errorf("date window after the date: %s", st.Status)
	}
	h := 10.0
	w = NoticeWindow{FlightHours: &h, WarnAt: 0.9, From: WindowFromApplicable}
	st := w.Evaluate(start, *at(5), NoticeUse{Hours: 8, RecentHoursPerDay: 0.5})
	if st.Status != DueOK || st.DueAt == nil || !st.DueAt.Equal(at(5).Add(96*time.Hour)) {
		t.Errorf("8 of 10 hours at 0.5 h/day: %+v, want ok, forecast 4 days on", st)
	}
	if st := w.Evaluate(start, *at(5), NoticeUse{Hours: 9.5}); st.Status != DueSoon {
		t.Errorf("9.5 of 10 hours: %s", st.Status)
	}
	if st := w.Evaluate(start, *at(5), NoticeUse{Hours: 10.01}); st.Status != DueOverdue {
		t.Errorf("10.01 of 10 hours: %s", st.Status)
	}
	n := &Notice{IssuedOn: "2026-02-01", Window: NoticeWindow{FlightHours: &h, From: WindowFromIssue, Recurring: true}}
	if got := n.WindowStart(*at(3), nil); !got.Equal(time.Date(2026, 2, 1, 0, 0, 0, 0, time.UTC)) {
		t.Errorf("window from issue starts %v", got)
	}
	if got := n.WindowStart(*at(3), at(8)); !got.Equal(*at(8)) {
		t.Errorf("recurring window after compliance starts %v", got)
	}
}

func TestNoticeValidate(t *testing.T) {
	fc := KindFlightController
	below, min := "4.2.0", "4.3.0"
	h := 5.0
	ok := Notice{Reference: "SB-26-014", Title: "t", IssuedOn: "2026-02-01", Revision: "1", Category: NoticeMandatory,
		RequiredWork: "update", Applicability: NoticeApplicability{PartKind: &fc}, Window: NoticeWindow{FlightHours: &h}}
	if err := ok.Validate(); err != nil {
		t.Fatal(err)
	}
	bad := []struct {
		field string
		edit  func(n *Notice)
	}{
		{"category", func(n *Notice) { n.Category = "urgent" }},
		{"applicability", func(n *Notice) { n.Applicability = NoticeApplicability{} }},
		{"applicability.software[0].below", func(n *Notice) {
			n.Applicability.Software = []SoftwareRange{{PartKind: fc, Min: &min, Below: &below}}
		}},
		{"window", func(n *Notice) { n.Window = NoticeWindow{} }},
		{"window.recurring", func(n *Notice) { d := "2026-05-01"; n.Window = NoticeWindow{DueOn: &d, Recurring: true} }},
	}
	for _, b := range bad {
		n := ok
		b.edit(&n)
		err := n.Validate()
		if fe, is := err.(*Error); !is || fe.Field != b.field {
			t.Errorf("want a %s error, got %v", b.field, err)
		}
	}
}
