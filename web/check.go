package web

import (
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// CheckData is the field check: pick an airframe and its packs, get the
// answer.
type CheckData struct {
	Airframes []*fleet.Airframe
	Airframe  *fleet.Airframe
	Packs     []store.PackChoice
	Chosen    map[string]bool
	Readiness *fleet.Readiness
	PackNotes []fleet.ReadinessItem // pack blockers and warnings, for the cautions box
}

// CheckPage builds the field check page.
func CheckPage(all []*fleet.Airframe, a *fleet.Airframe, packs []store.PackChoice, chosen []string,
	rd *fleet.Readiness) CheckData {
	d := CheckData{Airframe: a, Packs: packs, Chosen: map[string]bool{}, Readiness: rd}
	for _, x := range all {
		if x.RetiredAt == nil {
			d.Airframes = append(d.Airframes, x)
		}
	}
	serials := map[string]bool{}
	for _, p := range packs {
		if contains(chosen, p.ID) {
			serials[p.Serial] = true
		}
	}
	for _, id := range chosen {
		d.Chosen[id] = true
		serials[id] = true
	}
	if rd != nil {
		for _, it := range append(append([]fleet.ReadinessItem{}, rd.Blockers...), rd.Warnings...) {
			if serials[it.Subject] {
				d.PackNotes = append(d.PackNotes, it)
			}
		}
	}
	return d
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}
