package sim

import (
	"fmt"
	"math"
	"math/rand/v2"
	"time"
)

// The demo firm's three models (invented figures, plausible for survey
// multirotors; masses and pack sizes are from memory of typical machines).
var demoModels = []Model{
	{Name: "Kestrel Q4", Layout: "quad-x", Rotors: 4, RotorDiameterMM: 330, EmptyMassG: 2300, MTOWG: 4500,
		CellsS: 6, PacksPerFlight: 1, MotorPN: "HD-4114-400", PropPN: "TP-1344", EscPN: "QA-ESC40",
		PackPN: "MC-6S10000", VibrationLevel: 0.6},
	{Name: "Osprey H6", Layout: "hex-x", Rotors: 6, RotorDiameterMM: 381, EmptyMassG: 4200, MTOWG: 9000,
		CellsS: 6, PacksPerFlight: 2, MotorPN: "HD-5010-320", PropPN: "TP-1555", EscPN: "QA-ESC60",
		PackPN: "MC-6S12000", VibrationLevel: 0.8},
	{Name: "Condor X8", Layout: "octo-x", Rotors: 8, RotorDiameterMM: 457, EmptyMassG: 7800, MTOWG: 15500,
		CellsS: 6, PacksPerFlight: 2, MotorPN: "HD-6215-180", PropPN: "TP-1860", EscPN: "QA-ESC80",
		PackPN: "MC-6S16000", VibrationLevel: 1.0},
}

// demoPackKinds: rated mAh, mass g, baseline IR mOhm, C rating per pack part number.
var demoPackKinds = map[string]struct{ mah, massG, irMohm, c float64 }{
	"MC-6S10000": {10000, 1350, 18, 15},
	"MC-6S12000": {12000, 1600, 16, 15},
	"MC-6S16000": {16000, 2050, 13, 15},
}

const (
	traceLot     = "L2405-17"
	demoMakerMot = "Hollin Drives"
	demoMakerPrp = "Tessaly Props"
	demoMakerEsc = "Quillon Avionics"
	demoMakerPk  = "Marrow Cells"
	demoMakerCam = "Brightfen Optics"
)

type builder struct {
	sc        Scenario
	rng       *rand.Rand
	models    map[string]Model
	serialN   map[string]int
	fitIdx    map[string]int // serial -> open fit index
	pack      map[string]*PackState
	packMassG map[string]float64
	packAvail map[string]time.Time
	packHold  map[string]time.Time // no flights from this time on
	pools     map[string][]string  // model -> pack serials
}

func (b *builder) serial(prefix string) string {
	b.serialN[prefix]++
	return fmt.Sprintf("%s-%05d", prefix, 100*b.serialN[prefix]+b.rng.IntN(100))
}

func (b *builder) addPart(p Part) string {
	b.sc.Parts = append(b.sc.Parts, p)
	return p.Serial
}

func (b *builder) fit(serial, af, pos string, at time.Time) {
	b.fitIdx[serial] = len(b.sc.Fits)
	b.sc.Fits = append(b.sc.Fits, Fit{Serial: serial, Airframe: af, Position: pos, From: at})
}

func (b *builder) unfit(serial string, at time.Time) {
	i := b.fitIdx[serial]
	b.sc.Fits[i].To = at
	delete(b.fitIdx, serial)
}

func (b *builder) motor(m Model, lot, rot string, acquired time.Time) string {
	return b.addPart(Part{Kind: KindMotor, Serial: b.serial(m.MotorPN[:2] + m.MotorPN[3:7]), PartNumber: m.MotorPN, Lot: lot,
		Maker: demoMakerMot, AcquiredOn: acquired, MassG: 60 + m.RotorDiameterMM/3,
		Motor: &MotorSpec{KV: map[int]float64{4: 400, 6: 320, 8: 180}[m.Rotors], Rotation: rot, BearingCount: 2,
			BearingDynamicRatingN: map[int]float64{4: 1350, 6: 1700, 8: 2200}[m.Rotors], BearingLifeFactor: 1}})
}

func (b *builder) prop(m Model, rot string, acquired time.Time) string {
	d := math.Round(m.RotorDiameterMM/25.4*10) / 10
	return b.addPart(Part{Kind: KindPropeller, Serial: b.serial("TP" + m.PropPN[3:5]), PartNumber: m.PropPN,
		Lot: fmt.Sprintf("P%s-%02d", acquired.Format("0601"), 1+b.rng.IntN(20)), Maker: demoMakerPrp,
		AcquiredOn: acquired, MassG: math.Round(d * d / 6),
		Propeller: &PropellerSpec{DiameterIn: d, PitchIn: math.Round(d*0.33*10) / 10, Blades: 2, Rotation: rot}})
}

func (b *builder) simple(kind, pn, prefix, maker string, massG float64, acquired time.Time) string {
	return b.addPart(Part{Kind: kind, Serial: b.serial(prefix), PartNumber: pn,
		Lot: fmt.Sprintf("B%s", acquired.Format("0601")), Maker: maker, AcquiredOn: acquired, MassG: massG})
}

// airframes builds the fleet, fits its parts and stocks spares. Airframe
// index 1, 2 and 4 (KQ-02, KQ-03, KQ-05) carry motors of the trace lot.
func (b *builder) airframes() {
	counts := []int{5, 4, 3}
	prefix := []string{"KQ", "OH", "CX"}
	for mi, m := range demoModels {
		b.sc.Models = append(b.sc.Models, m)
		b.models[m.Name] = m
		for k := range counts[mi] {
			code := fmt.Sprintf("%s-%02d", prefix[mi], k+1)
			commissioned := b.sc.Start.AddDate(0, 0, -40-b.rng.IntN(200))
			af := Airframe{Code: code, Name: fmt.Sprintf("%s %d", m.Name[:len(m.Name)-3], k+1), Model: m.Name,
				Layout: m.Layout, Positions: Layout(m.Rotors), CellsS: m.CellsS, PacksPerFlight: m.PacksPerFlight,
				EmptyMassG: m.EmptyMassG + float64(b.rng.IntN(120)), MTOWG: m.MTOWG,
				RotorDiameterMM: m.RotorDiameterMM, MotorBias: make([]float64, m.Rotors)}
			for i := range af.MotorBias {
				af.MotorBias[i] = 0.03 * (2*b.rng.Float64() - 1) // small off-centre mass
			}
			if code == "CX-01" {
				// The hard-duty story: a lidar payload mounted off-centre.
				af.EmptyMassG += 900
				af.MotorBias[2] = 0.16
				af.Notes = "carries the lidar payload, mounted toward m3"
			}
			acq := commissioned.AddDate(0, 0, -7)
			for i, pos := range af.Positions {
				lot := "L2311-08"
				if mi == 0 && (k == 1 || (k == 2 && i < 2) || (k == 4 && i >= 2)) {
					lot = traceLot
				} else if k%2 == 1 {
					lot = "L2403-02"
				}
				b.fit(b.motor(m, lot, pos.Rotation, acq), code, pos.Label, commissioned)
				b.fit(b.prop(m, pos.Rotation, acq), code, pos.Label, commissioned)
				b.fit(b.simple(KindESC, m.EscPN, "QE"+m.EscPN[6:], demoMakerEsc, 45, acq), code, pos.Label, commissioned)
			}
			b.fit(b.simple(KindFlightController, "QA-FC7", "QF7", demoMakerEsc, 90, acq), code, "fc", commissioned)
			b.fit(b.simple(KindCamera, "BO-M24", "BOM", demoMakerCam, 420, acq), code, "camera", commissioned)
			b.fit(b.simple(KindGimbal, "BO-G3", "BOG", demoMakerCam, 380, acq), code, "gimbal", commissioned)
			b.sc.Airframes = append(b.sc.Airframes, af)
		}
		// Spares in stock: one motor of each rotation, four propellers, one ESC.
		acq := b.sc.Start.AddDate(0, 0, -20)
		lot := "L2403-02"
		if mi == 0 {
			lot = traceLot
		}
		b.motor(m, lot, "cw", acq)
		b.motor(m, "L2403-02", "ccw", acq)
		for i := range 4 {
			b.prop(m, []string{"cw", "ccw"}[i%2], acq)
		}
		b.simple(KindESC, m.EscPN, "QE"+m.EscPN[6:], demoMakerEsc, 45, acq)
	}
}

// packs builds each model's pack pool with its ageing truth. One pool pack
// of the hex model is the climbing-resistance story.
func (b *builder) packs() {
	pool := []int{10, 10, 8}
	for mi, m := range demoModels {
		k := demoPackKinds[m.PackPN]
		for i := range pool[mi] {
			ser := b.serial("MC" + m.PackPN[3:5] + m.PackPN[5:7])
			acquired := b.sc.Start.AddDate(0, 0, -5-b.rng.IntN(25))
			ps := &PackState{Serial: ser, Chemistry: LiPo, CellsS: m.CellsS, CellsP: 1, RatedMah: k.mah,
				BaselineIRmOhm: k.irMohm * (0.95 + 0.1*b.rng.Float64()),
				FadeLaw:        FadeSqrt, FadeCoeff: 0.006 + 0.004*b.rng.Float64(), IRGrowth: 0.0008 + 0.0007*b.rng.Float64(),
				StartSoC: 1, CellSpread: 0.01}
			if mi == 1 && i == 3 {
				ps.IRGrowth = 0.012
				b.sc.Stories.ClimbingPack = ser
			}
			if mi == 2 && i == 5 {
				ps.WeakCell, ps.WeakCellCapacity, ps.WeakCellIR = 4, 0.93, 1.5
			}
			b.addPart(Part{Kind: KindPack, Serial: ser, PartNumber: m.PackPN, Lot: "C" + acquired.Format("0601"),
				Maker: demoMakerPk, AcquiredOn: acquired, MassG: k.massG, Status: "stock",
				Pack: &PackSpec{Chemistry: LiPo, CellsS: m.CellsS, CellsP: 1, RatedMah: k.mah, CRating: k.c,
					BaselineIRmOhm: math.Round(ps.BaselineIRmOhm*10) / 10}})
			b.pack[ser] = ps
			b.packMassG[ser] = k.massG
			b.packAvail[ser] = acquired
			b.pools[m.Name] = append(b.pools[m.Name], ser)
			// Acceptance capacity test on arrival.
			b.sc.PackChecks = append(b.sc.PackChecks, PackCheck{Serial: ser, At: acquired.Add(10 * time.Hour),
				Kind: "capacity_test", MahIn: math.Round(ps.CapacityMah()), RestV: 4.2 * float64(m.CellsS)})
		}
	}
}
