package fleet

// Chemistry is a pack cell chemistry.
type Chemistry string

const (
	LiPo  Chemistry = "lipo"
	LiHV  Chemistry = "lihv"
	LiIon Chemistry = "liion"
)

// CellLimits are per-cell voltages of a chemistry. Sources are given per field;
// makers' datasheets take precedence for any real pack.
type CellLimits struct {
	FullV    float64 // full charge: 4.20 V LiPo/Li-ion (NASA PCoE README, CC to 4.2 V); 4.35 V LiHV (common practice)
	NominalV float64 // 3.7 V LiPo/Li-ion, 3.8 V LiHV (common practice)
	StorageV float64 // about 3.8 V (common practice)
	FloorV   float64 // minimum under load in normal use (common practice; datasheet cut-offs 2.5–3.0 V)
}

var cellLimits = map[Chemistry]CellLimits{
	LiPo:  {FullV: 4.20, NominalV: 3.70, StorageV: 3.80, FloorV: 3.0},
	LiHV:  {FullV: 4.35, NominalV: 3.80, StorageV: 3.85, FloorV: 3.0},
	LiIon: {FullV: 4.20, NominalV: 3.60, StorageV: 3.70, FloorV: 2.8},
}

// Limits returns the cell limits of a chemistry and whether it is known.
func (c Chemistry) Limits() (CellLimits, bool) {
	l, ok := cellLimits[c]
	return l, ok
}

// Valid reports whether c is a known chemistry.
func (c Chemistry) Valid() bool {
	_, ok := cellLimits[c]
	return ok
}
