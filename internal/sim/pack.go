package sim

import (
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
)

// Chemistry names, as used by the project's pack specs.
const (
	LiPo  = "lipo"
	LiHV  = "lihv"
	LiIon = "liion"
)

// ocvStep is the state-of-charge spacing of the open-circuit voltage tables.
const ocvStep = 0.05

// Resting open-circuit voltage per cell at SoC 0, 0.05, ..., 1. The curves are
// from memory (typical published LiPo / NMC Li-ion resting curves); only the
// full-charge ends are sourced: 4.20 V (NASA PCoE README: charge CC to 4.2 V)
// and 4.35 V for LiHV (common practice).
var lipoOCV = []float64{3.00, 3.30, 3.60, 3.69, 3.73, 3.75, 3.77, 3.79, 3.80, 3.82, 3.84,
	3.85, 3.87, 3.91, 3.95, 3.98, 4.02, 4.08, 4.11, 4.15, 4.20}

var ocvTables = map[string][]float64{
	LiPo: lipoOCV,
	LiIon: {3.00, 3.30, 3.42, 3.48, 3.53, 3.57, 3.60, 3.63, 3.65, 3.68, 3.71,
		3.75, 3.79, 3.83, 3.87, 3.92, 3.96, 4.01, 4.06, 4.13, 4.20},
	LiHV: lihvTable(),
}

// lihvTable lifts the LiPo curve linearly with SoC so that full charge reads
// 4.35 V and empty matches LiPo (from memory: LiHV differs mostly near full).
func lihvTable() []float64 {
	out := make([]float64, len(lipoOCV))
	for i, v := range lipoOCV {
		out[i] = v + 0.15*float64(i)*ocvStep
	}
	return out
}

// KnownChemistry reports whether the simulator has an OCV curve for chem.
func KnownChemistry(chem string) bool { _, ok := ocvTables[chem]; return ok }

// OCV is the resting cell voltage at state of charge soc (0..1) for the
// chemistry (piecewise-linear table; linear extrapolation outside 0..1).
// It panics on an unknown chemistry; FlightSpec validation rejects those.
func OCV(chem string, soc float64) float64 {
	return ocvLookup(ocvTables[chem], soc)
}

func ocvLookup(tab []float64, soc float64) float64 {
	x := soc / ocvStep
	i := int(x)
	if x < 0 {
		i = 0
	}
	if i > len(tab)-2 {
		i = len(tab) - 2
	}
	return tab[i] + (tab[i+1]-tab[i])*(x-float64(i))
}

// SoCFromOCV inverts OCV on 0..1 (clamped at the ends).
func SoCFromOCV(chem string, v float64) float64 {
	tab := ocvTables[chem]
	if v <= tab[0] {
		return 0
	}
	for i := 1; i < len(tab); i++ {
		if v <= tab[i] {
			return (float64(i-1) + (v-tab[i-1])/(tab[i]-tab[i-1])) * ocvStep
		}
	}
	return 1
}

// FadeLaw selects how capacity falls with equivalent full cycles.
type FadeLaw int

const (
	// FadeSqrt: C(n) = rated (1 - FadeCoeff sqrt(n)).
	FadeSqrt FadeLaw = iota
	// FadeLinear: C(n) = rated (1 - FadeCoeff n).
	FadeLinear
)

// PackState is one battery pack as it starts a flight. Cycles, the fade and
// resistance laws and their coefficients are the truth a pack-health model
// should recover.
type PackState struct {
	Serial    string
	Chemistry string // LiPo, LiHV or LiIon
	CellsS    int
	CellsP    int
	RatedMah  float64
	// BaselineIRmOhm is the whole pack's DC resistance when new.
	BaselineIRmOhm float64
	// Cycles is the equivalent full cycles (sum of mAh / rated mAh) so far.
	Cycles    float64
	FadeLaw   FadeLaw
	FadeCoeff float64
	// IRGrowth is the fractional resistance rise per equivalent full cycle:
	// R(n) = BaselineIRmOhm (1 + IRGrowth n).
	IRGrowth float64
	// StartSoC is the state of charge (0..1) at log start.
	StartSoC float64
	// CellSpread is the relative standard deviation of cell-group capacity
	// and resistance, fixed per serial.
	CellSpread float64
	// WeakCell is the 1-based index of a weak cell group, 0 for none; it has
	// WeakCellCapacity times the capacity and WeakCellIR times the
	// resistance of the others (before normalisation).
	WeakCell         int
	WeakCellCapacity float64
	WeakCellIR       float64
}

// CapacityMah is the pack capacity at the current cycle count under the fade law.
func (p PackState) CapacityMah() float64 {
	return p.RatedMah * capacityFraction(p.FadeLaw, p.FadeCoeff, p.Cycles)
}

func capacityFraction(law FadeLaw, coeff, cycles float64) float64 {
	var f float64
	switch law {
	case FadeLinear:
		f = 1 - coeff*cycles
	default:
		f = 1 - coeff*math.Sqrt(cycles)
	}
	// A pack this far gone is scrap; keep the model finite.
	return math.Max(f, 0.05)
}

// IRmOhm is the pack DC resistance at the current cycle count.
func (p PackState) IRmOhm() float64 { return p.BaselineIRmOhm * (1 + p.IRGrowth*p.Cycles) }

func (p PackState) validate(i int) error {
	f := fmt.Sprintf("packs[%d]", i)
	switch {
	case !KnownChemistry(p.Chemistry):
		return fmt.Errorf("%s.chemistry: unknown %q", f, p.Chemistry)
	case p.CellsS < 1 || p.CellsS > 24:
		return fmt.Errorf("%s.cells_s: must be 1..24", f)
	case p.CellsP < 1:
		return fmt.Errorf("%s.cells_p: must be >= 1", f)
	case !(p.RatedMah > 0):
		return fmt.Errorf("%s.rated_mah: must be > 0", f)
	case !(p.BaselineIRmOhm > 0):
		return fmt.Errorf("%s.baseline_ir_mohm: must be > 0", f)
	case p.Cycles < 0 || p.FadeCoeff < 0 || p.IRGrowth < 0 || p.CellSpread < 0:
		return fmt.Errorf("%s: cycles and law coefficients must be >= 0", f)
	case p.StartSoC <= 0 || p.StartSoC > 1:
		return fmt.Errorf("%s.start_soc: must be in (0, 1]", f)
	case p.WeakCell < 0 || p.WeakCell > p.CellsS:
		return fmt.Errorf("%s.weak_cell: must be 0..cells_s", f)
	case p.WeakCell > 0 && (!(p.WeakCellCapacity > 0) || !(p.WeakCellIR > 0)):
		return fmt.Errorf("%s: a weak cell needs capacity and IR factors > 0", f)
	}
	return nil
}

// packModel is a pack prepared for simulation: per cell-group capacity (A s)
// and resistance (ohm).
type packModel struct {
	tab      []float64
	s0       float64   // start SoC
	capAs    []float64 // cell-group capacity, A s
	rCell    []float64 // cell-group resistance, ohm
	rPack    float64   // sum of rCell
	capMah   float64
	irMohm   float64
	cellsOCV []float64 // scratch
}

// serialSeed makes the cell scatter a property of the pack, the same on
// every flight.
func serialSeed(serial string) uint64 {
	h := fnv.New64a()
	h.Write([]byte(serial))
	return h.Sum64()
}

func newPackModel(p PackState) packModel {
	rng := rand.New(rand.NewPCG(serialSeed(p.Serial), 0x9e3779b97f4a7c15))
	s := p.CellsS
	cf := make([]float64, s)
	rf := make([]float64, s)
	var cs, rs float64
	for i := range s {
		cf[i] = 1 + p.CellSpread*clampNorm(rng.NormFloat64())
		rf[i] = 1 + p.CellSpread*clampNorm(rng.NormFloat64())
		if i+1 == p.WeakCell {
			cf[i] *= p.WeakCellCapacity
			rf[i] *= p.WeakCellIR
		}
		cs += cf[i]
		rs += rf[i]
	}
	m := packModel{tab: ocvTables[p.Chemistry], s0: p.StartSoC, capMah: p.CapacityMah(), irMohm: p.IRmOhm(),
		capAs: make([]float64, s), rCell: make([]float64, s), cellsOCV: make([]float64, s)}
	// Normalise so the mean cell group has exactly the law's capacity and the
	// groups' resistances add up to exactly the law's pack resistance.
	for i := range s {
		m.capAs[i] = cf[i] / (cs / float64(s)) * m.capMah * 3.6
		m.rCell[i] = rf[i] / rs * m.irMohm / 1000
	}
	m.rPack = m.irMohm / 1000
	return m
}

func clampNorm(x float64) float64 { return math.Max(-3, math.Min(3, x)) }

// ocv returns the pack open-circuit voltage after drawing q (A s) and fills
// m.cellsOCV; minSoC is the lowest cell-group state of charge.
func (m *packModel) ocv(q float64) (v, minSoC float64) {
	minSoC = 1
	for i, c := range m.capAs {
		soc := m.s0 - q/c
		if soc < minSoC {
			minSoC = soc
		}
		o := ocvLookup(m.tab, soc)
		m.cellsOCV[i] = o
		v += o
	}
	return v, minSoC
}
