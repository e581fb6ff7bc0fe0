// Package sim is a deterministic, physics-based simulator of multirotor
// flights and their flight logs, with known truth, for the demo, tests and
// benchmarks. It does no I/O beyond writing a log to an io.Writer.
//
// # API
//
//	spec := sim.DefaultSpec(seed)          // 1.5 kg quad, 4S 8000 mAh, 15 min, 50 Hz
//	truth, err := sim.Generate(spec, w)    // writes the CSV log, returns the Truth
//	truth, err := sim.Estimate(spec)       // same truth on a coarse grid, no log
//	to, land, err := sim.Timeline(spec)    // take-off and landing offsets only
//	sc := sim.DemoFleet(seed, start, months) // the invented demo fleet
//
// The same FlightSpec (including Seed) always gives the same bytes. Three
// PCG streams derived from the seed drive the flight plan, the sample clock
// and the sensor noise, so changing the noise leaves the rest alone.
//
// # Log format
//
// The project's CSV log (DESIGN.md section 4): metadata comments
// "# start: <RFC 3339>", "# airframe: <code>", "# packs: <serial>[,<serial>]",
// then the header and rows. Columns (FlightSpec.Columns): ColumnsFull writes
// t_s, pack_v, pack_a, rpm_m1..rpm_mN, cell_1_v..cell_S_v, baro_pa, temp_c,
// acc_x, acc_y, acc_z, lat, lon; ColumnsThrottle writes a mean throttle
// (mean rpm / (hover rpm / HoverThrottle), clamped to 0..1) instead of rpm;
// ColumnsRequired writes only t_s, pack_v, pack_a. With several packs in
// parallel the cell columns are those of Packs[0]. Numbers are fixed-point
// with 3 decimals for t_s (4 above 200 Hz), volts and amps, 4 for cells and
// throttle, 0 for rpm, 1 for Pa, 3 for m/s^2 and 7 for degrees.
//
// The sample clock is irregular: nominal period 1/SampleHz with uniform
// jitter (Sampling.JitterFrac of a period), and with probability
// Sampling.DropoutProb per sample a gap of up to Sampling.MaxDropoutS. t_s
// starts at 0 and is strictly increasing. One extra sample sits exactly at
// the touchdown load peak, as a logger's event sample would (assumption:
// without it a 10 Hz log would miss an 80 ms pulse).
//
// # Timeline
//
// Rest 6 s (rotors stopped, avionics current only, so the rest voltage is
// measurable); idle 2 s at 30 % of hover rpm; spin-up 1.5 s with thrust
// ramping to the weight; take-off; climb (accelerate at 1.2 m/s^2 to
// 2.5 m/s, climb, decelerate) to CruiseHeightM; cruise on a lawn-mower
// survey; descent (1.0 m/s^2 to 2 m/s, then slowing to the touchdown speed
// for the last 2 m); touchdown; thrust ramps to idle over 1 s, idles 1.5 s,
// spins down over 0.5 s; rest to the end of DurationS. These phase lengths
// are common practice, not measured. The touchdown speed is 0.4 m/s, plus
// 0.8 m/s per g of LandingG above 2 (assumed link: a hard landing is a fast one).
//
// During cruise the vertical profile has throttle doublets every 8-20 s:
// acceleration +a for tau, -a for 2 tau, +a for tau (a 1-2.5 m/s^2,
// tau 0.8-1.6 s), which return to the same height and speed. They step the
// current by 10-40 %, so DC resistance is observable, and keep climb and
// descent symmetric.
//
// # Physics
//
// Vertical motion is exact piecewise-constant acceleration a(t); the total
// thrust while airborne is T = m (g + a) (thrust treated as vertical; the
// tilt needed for horizontal flight, under 10 degrees, is neglected, an
// assumption). Because the vertical speed is zero at take-off and only the
// touchdown speed at landing, the mean thrust over the airborne time equals
// m g to within m v_touchdown / airborne time (about 5e-5 here), and the
// mean vertical acceleration is about zero.
//
// Rotor thrust is T_i = k rpm_i^2 with k = C_T rho D^4 / 3600 (from
// T = C_T rho n^2 D^4, n in rev/s; C_T 0.1 by default, a plausible small-prop
// value from memory), rho at the site (ISA pressure at SiteElevationM with
// the actual TempC, rho = p / (R T)), held constant over the flight. Hover
// rpm solves m g = N k rpm^2. Motor i carries the share
// T_i = T/N (1 + b_i + c_i(t)): b_i is MotorBias with its mean removed
// (an off-centre mass; a planted weak or hard-working motor spins faster by
// sqrt(1 + b_i)), c_i is zero-sum attitude-control activity (roll, pitch and
// yaw sinusoids of amplitude ControlActivity mapped through the arm angles
// and rotations). Since the shares add up to N, k = m g / (N mean(rpm^2))
// over the airborne time recovers k.
//
// Electrical power is the avionics load plus, per rotor, the momentum-theory
// ideal induced power P_ideal = T_i^1.5 / sqrt(2 rho A), A = pi D^2 / 4,
// divided by the figure of merit (default 0.55; REFERENCES.md gives 0.4-0.65
// for small props, from memory) and the motor/ESC efficiency (default 0.8,
// from memory). The same hover-equivalent power is used in forward flight
// (an assumption: translational lift and parasite drag are ignored).
//
// # Packs
//
// Packs are S series cell groups (P cells each folded into one group), all
// packs in parallel on one bus. Each group has a resting open-circuit
// voltage OCV(SoC) from a piecewise-linear table per chemistry (LiPo 4.20 V
// full to 3.30 V at 5 %, from memory; LiHV lifts it to 4.35 V full; Li-ion
// NMC-like) and a pure ohmic resistance (no RC relaxation, an assumption).
// Capacity follows the fade law with equivalent full cycles n:
// C = rated (1 - FadeCoeff sqrt(n)) (FadeSqrt) or rated (1 - FadeCoeff n)
// (FadeLinear); resistance R = BaselineIRmOhm (1 + IRGrowth n). Group
// capacities and resistances scatter by CellSpread (fixed per serial, from
// a hash of it) and an optional weak group, normalised so the mean group
// capacity is C and the group resistances add up to R exactly. Each group's
// SoC comes from coulomb counting, SoC = SoC0 - q / C_group. The parallel
// packs form a Thevenin source E = sum(E_j/R_j) / sum(1/R_j),
// R = 1 / sum(1/R_j); the terminal current solves P = V I with V = E - I R
// (smaller root), and each pack's current is (E_j - V) / R_j.
//
// # Truth
//
// Truth is integrated from the noise-free signal on a grid of at most
// 50 ms, split at every profile breakpoint with left and right limits, by
// the trapezoidal rule: charge, energy (integral of V I), per-pack figures,
// revolutions per motor, mean thrust and power over the airborne time,
// extremes; plus the constants of the model (k, hover rpm, capacity and
// resistance at this cycle count) and the plan (take-off and landing
// offsets, distance, maximum height). Estimate uses a 1 s grid and agrees
// within 0.1 %.
//
// # Sensors
//
// White Gaussian noise with the standard deviations in Noise (zero value:
// none; DefaultNoise is plausible). baro_pa is the ISA pressure at site
// elevation + height; temp_c falls 6.5 K/km with height. Accelerometer axes:
// x forward, y left, z up, reading specific force, so acc_z is +g at rest
// and T/m in flight; vibration is a sinusoid at the rotor frequency (phase
// from the integrated revolutions) of amplitude VibrationLevel (rpm/hover
// rpm)^2 on x and y, half of that at twice the frequency on z (unbalance
// force m e w^2). The touchdown adds a half-cosine pulse of 80 ms peaking at
// LandingG g on z.
//
// # Track
//
// The survey is a lawn-mower pattern from the take-off point: legs of a
// length solved so the whole path (legs, LegSpacingM steps, straight return
// home) takes exactly the cruise time at CruiseSpeedMS, at a random heading.
// The climb and descent are vertical over the take-off point. Local east and
// north metres map to WGS 84 latitude and longitude with the meridian and
// prime-vertical radii of curvature at the take-off point (tangent-plane
// approximation; against Vincenty's geodesic on WGS 84 the track lengths
// agree within about 1e-4). Truth.DistanceM is the path length in the local
// plane.
//
// # Demo fleet
//
// DemoFleet returns a Scenario: an invented firm with three models (Kestrel
// Q4 quad-x, Osprey H6 hex-x, Condor X8 octo-x), twelve airframes with their
// fitted motors, propellers, ESCs (at m1..mN), flight controller, camera and
// gimbal (positions "fc", "camera", "gimbal"), spares in stock, pack pools,
// twelve client jobs, five pilots and about 600-1500 chronological flights
// (6 months gives about 700) of 15-25 minutes at 10 Hz, each discharging at
// most 75 % of its packs. Pack cycle counts accumulate from flight to flight
// (Estimate per flight). Stories names the planted stories: the hard-duty
// motor (CX-01 m3, the heaviest airframe, +16 % thrust share), the pack
// whose resistance climbs (IRGrowth 0.012 per cycle, against 0.0008-0.0015),
// a propeller strike event on a late OH-03 flight, a 3.5 g hard landing on a
// late KQ-04 flight left for the ingest to detect, a pack charged to
// 4.20 V/cell nine days before the end and not flown for its last ten days,
// motor lot L2405-17 on three quads that fly several jobs, and a motor swap
// on OH-02 m4 at mid-period (work record, fit ended, spare fitted). Each
// story airframe stops flying after its story flight. Names, places and
// figures are invented.
package sim
