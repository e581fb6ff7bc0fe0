package schedule

import (
	"cmp"
	"context"
	"time"

	"golang.org/x/sync/errgroup"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// timeline is an airframe's records over a stretch of time [first, last],
// read once to judge readiness at any moment in it: holds, fits, crash and
// hard-landing events, the rules and, lazily, each rule's history on each
// subject and each pack's record.
type timeline struct {
	p           *Programme
	a           *fleet.Airframe
	layout      *fleet.Layout
	subject     store.Subject // the airframe as a rule subject
	holds       []store.HoldSpan
	fits        []store.FitSpan
	events      []*fleet.Event
	rules       []*fleet.ServiceRule
	first, last time.Time
	hist        map[string]*history // rule id/subject id
	packs       map[string]*packRecord
}

// packRecord is a pack as the timeline knows it (part nil: not in the
// register).
type packRecord struct {
	part     *fleet.Part
	subject  store.Subject
	statuses []store.StatusSpan
}

func (p *Programme) timeline(ctx context.Context, airframeID string, first, last time.Time) (*timeline, error) {
	a, err := p.DB.Airframe(ctx, airframeID)
	if err != nil {
		return nil, err
	}
	tl := &timeline{p: p, a: a, first: first, last: last, hist: map[string]*history{}, packs: map[string]*packRecord{}}
	if tl.layout, err = p.DB.Layout(ctx, a.Layout); err != nil {
		return nil, err
	}
	if tl.subject, err = p.DB.AirframeSubject(ctx, a); err != nil {
		return nil, err
	}
	if tl.holds, err = p.DB.Holds(ctx, a.ID); err != nil {
		return nil, err
	}
	if tl.fits, err = p.DB.FitsDuring(ctx, a.ID, first, last); err != nil {
		return nil, err
	}
	if tl.events, err = p.DB.AirframeEvents(ctx, a.ID, []string{"crash", "hard_landing"}, last); err != nil {
		return nil, err
	}
	rules, err := p.DB.Rules(ctx)
	if err != nil {
		return nil, err
	}
	for _, r := range rules {
		if r.Enabled {
			tl.rules = append(tl.rules, r)
		}
	}
	return tl, nil
}

// factsAt is the facts at the moment at (within the timeline's stretch).
func (tl *timeline) factsAt(ctx context.Context, at time.Time, packIDs []string) (*readinessFacts, error) {
	a := tl.a
	f := &readinessFacts{airframe: a, layout: tl.layout, retired: a.RetiredAt != nil && !a.RetiredAt.After(at),
		packIDs: packIDs, packs: map[string]*packFacts{}}
	for _, h := range tl.holds {
		if !at.Before(h.From) && (h.To == nil || at.Before(*h.To)) {
			f.hold = &h.Reason
		}
	}
	var fitted []fleet.FittedPart
	var parts []store.FitSpan
	for _, fs := range tl.fits {
		if !fs.On(at) {
			continue
		}
		parts = append(parts, fs)
		fitted = append(fitted, fleet.FittedPart{Kind: fs.Kind, Position: fs.Position})
		if fs.Kind == fleet.KindMotor || fs.Kind == fleet.KindPropeller {
			f.rotors = append(f.rotors, store.FittedRotor{Kind: fs.Kind, Serial: fs.Serial, Position: fs.Position, Rotation: fs.Rotation})
		}
	}
	f.empty = store.EmptyPlaces(tl.layout, fitted)
	for _, e := range tl.events {
		if store.OpenAt(e, at) {
			f.events = append(f.events, e)
		}
	}
	// The airframe's and its parts' rules, in the order they are judged;
	// their histories are read first, several at once (each is three
	// short statements that mostly wait on the database).
	var jobs []ruleSubject
	for _, r := range tl.rules {
		switch {
		case r.AppliesTo == "airframe":
			if r.Model != nil && *r.Model != a.Model {
				continue
			}
			jobs = append(jobs, ruleSubject{r, tl.subject})
		case r.AppliesTo == string(fleet.KindPack):
			// judged per pack below
		default:
			for _, fs := range parts {
				if string(fs.Kind) != r.AppliesTo || (r.PartNumber != nil && (fs.PartNumber == nil || *fs.PartNumber != *r.PartNumber)) {
					continue
				}
				jobs = append(jobs, ruleSubject{r, store.Subject{Kind: "part", ID: fs.PartID, Name: fs.Serial, AirframeID: &a.ID,
					PartNumber: fs.PartNumber, Position: &fs.Position, Start: fs.FirstFitted}})
			}
		}
	}
	if err := tl.preload(ctx, jobs); err != nil {
		return nil, err
	}
	for _, j := range jobs {
		if err := tl.judge(ctx, j.r, j.s, at, &f.due); err != nil {
			return nil, err
		}
	}
	for _, id := range packIDs {
		pr, err := tl.pack(ctx, id)
		if err != nil {
			return nil, err
		}
		if pr.part == nil {
			continue
		}
		pf := &packFacts{part: pr.part, status: store.StatusAt(pr.statuses, at)}
		f.packs[id] = pf
		if pr.part.Kind != fleet.KindPack {
			continue
		}
		if err := tl.packHealth(ctx, pr, at, pf); err != nil {
			return nil, err
		}
		for _, r := range tl.rules {
			if r.AppliesTo != string(fleet.KindPack) || (r.PartNumber != nil && (pr.subject.PartNumber == nil || *pr.subject.PartNumber != *r.PartNumber)) {
				continue
			}
			if err := tl.judge(ctx, r, pr.subject, at, &pf.due); err != nil {
				return nil, err
			}
		}
	}
	return f, nil
}

// ruleSubject is a rule to judge on a subject.
type ruleSubject struct {
	r *fleet.ServiceRule
	s store.Subject
}

// preload reads the histories of the jobs not read yet, several at a time
// (Programme.HistoriesAtOnce), into the timeline's cache (judge reads them from there, in order:
// the verdict is the same as when each is read as it is needed).
func (tl *timeline) preload(ctx context.Context, jobs []ruleSubject) error {
	var todo []ruleSubject
	seen := map[string]bool{}
	for _, j := range jobs {
		key := j.r.ID + "/" + j.s.ID
		if tl.hist[key] == nil && !seen[key] {
			seen[key] = true
			todo = append(todo, j)
		}
	}
	atOnce := cmp.Or(tl.p.HistoriesAtOnce, 4)
	if len(todo) < 2 || atOnce < 2 {
		return nil
	}
	hs := make([]*history, len(todo))
	g, gctx := errgroup.WithContext(ctx)
	g.SetLimit(atOnce)
	for i, j := range todo {
		g.Go(func() error {
			var err error
			hs[i], err = tl.p.load(gctx, j.r, j.s, tl.first, &tl.last)
			return err
		})
	}
	if err := g.Wait(); err != nil {
		return err
	}
	for i, j := range todo {
		tl.hist[j.r.ID+"/"+j.s.ID] = hs[i]
	}
	return nil
}

// judge applies a rule to a subject at the moment at, reading the
// subject's history once for the whole timeline.
func (tl *timeline) judge(ctx context.Context, r *fleet.ServiceRule, s store.Subject, at time.Time, out *[]*fleet.DueItem) error {
	key := r.ID + "/" + s.ID
	h := tl.hist[key]
	if h == nil {
		var err error
		if h, err = tl.p.load(ctx, r, s, tl.first, &tl.last); err != nil {
			return err
		}
		tl.hist[key] = h
	}
	it, err := tl.p.evaluate(ctx, r, s, h, at, true)
	if err != nil {
		return err
	}
	*out = append(*out, it)
	return nil
}

// pack reads a pack's record once per timeline.
func (tl *timeline) pack(ctx context.Context, id string) (*packRecord, error) {
	if pr, ok := tl.packs[id]; ok {
		return pr, nil
	}
	pr := &packRecord{}
	tl.packs[id] = pr
	pk, err := tl.p.DB.Part(ctx, id)
	if fleet.ErrorCode(err) == fleet.ENOTFOUND {
		return pr, nil
	} else if err != nil {
		return nil, err
	}
	pr.part = pk
	if pk.Kind != fleet.KindPack {
		return pr, nil
	}
	subs, err := tl.p.DB.PackSubjects(ctx, []string{id})
	if err != nil {
		return nil, err
	}
	if len(subs) == 1 {
		pr.subject = subs[0]
	}
	st, err := tl.p.DB.PartStatuses(ctx, []string{id})
	if err != nil {
		return nil, err
	}
	pr.statuses = st[id]
	return pr, nil
}

// packHealth fills the pack's health reasons and swelling report as of the
// moment: the view computed from the records before it.
func (tl *timeline) packHealth(ctx context.Context, pr *packRecord, at time.Time, pf *packFacts) error {
	if tl.p.Health == nil {
		return nil
	}
	v, err := tl.p.Health.PackAt(ctx, pr.part.ID, at)
	if err != nil {
		return err
	}
	if v.Pack != nil {
		pf.reasons = v.Pack.Reasons
		for _, r := range v.Pack.Reasons {
			if r.Code == "pack_swollen" {
				pf.swollen = true
			}
		}
	}
	return nil
}
