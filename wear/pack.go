package wear

import (
	"sort"

	"github.com/rotorwright/rotorwright/fleet"
)

// DefaultMinSoCSpan is the smallest state-of-charge span a capacity
// estimate accepts: an OCV table error of a few per cent of SoC would
// swamp a smaller span. Our choice; a parameter.
const DefaultMinSoCSpan = 0.3

// ocvPoint is one point of a per-cell rest-voltage (OCV) curve.
type ocvPoint struct{ soc, v float64 }

// ocvTables are per-cell open-circuit voltage against state of charge, all
// from memory (hobby and cell-maker charts of rested cells; no primary
// source at hand): use them for estimates, not for acceptance tests. Each
// ends at the chemistry's full-charge voltage in fleet.CellLimits.
var ocvTables = map[fleet.Chemistry][]ocvPoint{
	fleet.LiPo: {
		{0, 3.27}, {0.05, 3.61}, {0.10, 3.69}, {0.15, 3.71}, {0.20, 3.73}, {0.25, 3.75},
		{0.30, 3.77}, {0.35, 3.79}, {0.40, 3.80}, {0.45, 3.82}, {0.50, 3.84}, {0.55, 3.85},
		{0.60, 3.87}, {0.65, 3.91}, {0.70, 3.95}, {0.75, 3.98}, {0.80, 4.02}, {0.85, 4.08},
		{0.90, 4.11}, {0.95, 4.15}, {1, 4.20},
	},
	fleet.LiHV: {
		{0, 3.30}, {0.05, 3.62}, {0.10, 3.70}, {0.20, 3.76}, {0.30, 3.81}, {0.40, 3.85},
		{0.50, 3.90}, {0.60, 3.96}, {0.70, 4.04}, {0.80, 4.12}, {0.90, 4.22}, {1, 4.35},
	},
	fleet.LiIon: {
		{0, 3.00}, {0.05, 3.30}, {0.10, 3.45}, {0.20, 3.55}, {0.30, 3.62}, {0.40, 3.68},
		{0.50, 3.74}, {0.60, 3.81}, {0.70, 3.89}, {0.80, 3.97}, {0.90, 4.07}, {1, 4.20},
	},
}

// SoCFromOCV returns the state of charge (0..1) of a rested cell from its
// voltage, interpolating linearly in the chemistry's OCV table (from
// memory). Voltages beyond the table's ends give 0 or 1.
func SoCFromOCV(chem fleet.Chemistry, cellV float64) (float64, error) {
	t, ok := ocvTables[chem]
	if !ok {
		return 0, fleet.FieldError("chemistry", "unknown chemistry %q", chem)
	}
	if !finite(cellV) || cellV <= 0 {
		return 0, fleet.FieldError("cell_v", "cell voltage must be positive")
	}
	if cellV <= t[0].v {
		return 0, nil
	}
	i := sort.Search(len(t), func(i int) bool { return t[i].v >= cellV })
	if i == len(t) {
		return 1, nil
	}
	a, b := t[i-1], t[i]
	return a.soc + (cellV-a.v)/(b.v-a.v)*(b.soc-a.soc), nil
}

// OCVFromSoC returns the rest voltage of a cell at a state of charge (0..1),
// the inverse of SoCFromOCV.
func OCVFromSoC(chem fleet.Chemistry, soc float64) (float64, error) {
	t, ok := ocvTables[chem]
	if !ok {
		return 0, fleet.FieldError("chemistry", "unknown chemistry %q", chem)
	}
	if !(soc >= 0 && soc <= 1) {
		return 0, fleet.FieldError("soc", "state of charge must lie in [0, 1]")
	}
	i := sort.Search(len(t), func(i int) bool { return t[i].soc >= soc })
	if i == 0 {
		return t[0].v, nil
	}
	a, b := t[i-1], t[i]
	return a.v + (soc-a.soc)/(b.soc-a.soc)*(b.v-a.v), nil
}

// EquivalentFullCycles returns sum mAh / rated mAh.
func EquivalentFullCycles(ratedMAh float64, mAh ...float64) (float64, error) {
	if !(ratedMAh > 0) || !finite(ratedMAh) {
		return 0, fleet.FieldError("rated_mah", "rated capacity must be positive")
	}
	s := 0.0
	for i, v := range mAh {
		if v < 0 || !finite(v) {
			return 0, fleet.Errorf(fleet.EINVALID, "charge %d must be finite and non-negative", i)
		}
		s += v
	}
	return s / ratedMAh, nil
}

// CapacityFromRest estimates capacity from a discharge between two rest
// voltages (per cell): charge used / (SoC_before - SoC_after). It refuses
// SoC spans below minSpan (0 means DefaultMinSoCSpan).
func CapacityFromRest(chem fleet.Chemistry, restBeforeCellV, restAfterCellV, usedMAh, minSpan float64) (float64, error) {
	before, err := SoCFromOCV(chem, restBeforeCellV)
	if err != nil {
		return 0, err
	}
	after, err := SoCFromOCV(chem, restAfterCellV)
	if err != nil {
		return 0, err
	}
	return capacityOverSpan(before-after, usedMAh, minSpan)
}

// CapacityFromCharge estimates capacity from a charge record: the mAh put in
// from a known rest voltage (per cell) up to full charge (CC-CV to
// termination, taken as SoC 1; coulombic losses neglected).
func CapacityFromCharge(chem fleet.Chemistry, restBeforeCellV, mAhIn, minSpan float64) (float64, error) {
	before, err := SoCFromOCV(chem, restBeforeCellV)
	if err != nil {
		return 0, err
	}
	return capacityOverSpan(1-before, mAhIn, minSpan)
}

// CapacityFromTest estimates capacity from a capacity test: a discharge from
// full charge of mAhOut, ending at rest voltage restAfterCellV (a discharge
// to the table's empty end gives mAhOut itself).
func CapacityFromTest(chem fleet.Chemistry, mAhOut, restAfterCellV, minSpan float64) (float64, error) {
	after, err := SoCFromOCV(chem, restAfterCellV)
	if err != nil {
		return 0, err
	}
	return capacityOverSpan(1-after, mAhOut, minSpan)
}

func capacityOverSpan(span, mAh, minSpan float64) (float64, error) {
	if minSpan == 0 {
		minSpan = DefaultMinSoCSpan
	}
	if !(mAh > 0) || !finite(mAh) {
		return 0, fleet.FieldError("mah", "charge must be positive")
	}
	if span < minSpan {
		return 0, fleet.Errorf(fleet.EUNPROCESSABLE, "state-of-charge span %.2f is below %.2f: too small for a capacity estimate", span, minSpan)
	}
	return mAh / span, nil
}

// StateOfHealth returns capacity / rated capacity.
func StateOfHealth(capacity, rated float64) (float64, error) {
	if !(rated > 0) || !finite(rated) {
		return 0, fleet.FieldError("rated_mah", "rated capacity must be positive")
	}
	if capacity < 0 || !finite(capacity) {
		return 0, fleet.FieldError("capacity", "capacity must be finite and non-negative")
	}
	return capacity / rated, nil
}
