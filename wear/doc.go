// Package wear computes part wear and health from values: motor bearing
// life, pack health and capacity fade, propeller life and airframe trends.
// It does no I/O and reads no clock: callers pass now. Errors are
// *fleet.Error (EINVALID for bad input, EUNPROCESSABLE when the data cannot
// support the estimate).
//
// # Motor bearings (ISO 281)
//
//   - L10(type, C, P) = (C/P)^p in 10^6 revolutions, p = 3 for Ball and
//     10/3 for Roller bearings; L10Hours(type, C, P, rpm) =
//     10^6/(60 n) (C/P)^p; ReliabilityFactor(pct) is a1 of ISO 281:2007
//     (90, 95, 96, 97, 98, 99 % only; other values are refused);
//     ModifiedLife = a1 a_ISO L10.
//   - EquivalentLoad(Fr, Fa, C0): deep-groove rule P = Fr if Fa/Fr <= e,
//     else 0.56 Fr + Y Fa, e and Y interpolated in Fa/C0 (Shigley Table
//     11-1), clamped at the table's ends; DeepGrooveFactors gives e, Y.
//   - DutyCycleMean(type, steps) gives P_m and n_m; MinerLifeHours(type, C, steps) the
//     Palmgren-Miner life in hours; MinerDamage(used, life) = sum n_i/N_i.
//   - BearingModel{Type, C_N, C0_N, Count, AISO, Reliability,
//     BalanceGrade_mm_s, RotorMassKg, Rated} is the per-motor setting. C_N > 0 selects the
//     absolute mode, else the relative mode with Rated{Hours, RPM, ThrustN}
//     (the service rule's interval at a reference duty). Load per
//     SpectrumBin{RPM, Seconds, Revolutions, ThrustN}: Fa = thrust on the
//     locating bearing, Fr = m (G/1000) w / Count from residual unbalance
//     (ISO 21940-11, default G 6.3). Damage(bins): absolute sums
//     rev / (Lnm 10^6); relative sums rev (P/P_ref)^p / (Hours 60 RPM), so
//     Rated.Hours at the reference duty consumes 1. The motor spec's
//     bearing.type is Type, dynamic_rating_n C_N, life_factor AISO.
//   - Status(flights []MotorFlight, now, window) returns BearingStatus:
//     ConsumedFraction, RecentDamagePerHour (per run hour over the trailing
//     window, default 30 days), RemainingEquivHours at that rate,
//     UtilisationHoursPerDay, ForecastDate (nil without utilisation) and
//     Series (cumulative consumed fraction per flight). Pass only the
//     flights since the bearings were renewed.
//
// # Packs
//
//   - EquivalentFullCycles(rated, mAh...) = sum mAh / rated.
//   - SoCFromOCV / OCVFromSoC: per-cell rest voltage against state of
//     charge for fleet.LiPo, LiHV and LiIon (tables from memory).
//   - CapacityFromRest (flight between two rest voltages), CapacityFromCharge
//     (charge record from a rest voltage to full), CapacityFromTest
//     (discharge from full): charge / SoC span, refused below a minimum
//     span (default 0.3). StateOfHealth = capacity / rated.
//   - FitOLS(basis, x, y) is least squares by QR with residual SD, R^2,
//     adjusted R^2, AICc and PredictionInterval (Student t).
//   - Trend forecasts (capacity fade, resistance rise): TrendModel
//     candidates, each named with its source: LinearModel (common practice),
//     SqrtModel (SEI growth), PowerModel (Q0 - a n^z, z in 0.3..1.5) and
//     DoubleExpModel (a e^{bn} + c e^{dn}, He et al. 2011), the nonlinear
//     ones fitted by variable projection with gonum's Nelder-Mead from a
//     coarse grid; a model whose fit fails or does not converge is dropped.
//     Forecast(points, settings) chooses the model by rolling-origin
//     evaluation on the points' own past and builds the prediction interval
//     from the rolling-origin errors per horizon (ForecastMethod states the
//     method), over every candidate not clearly worse than the best; with
//     fewer than 15 points, or before the trend has covered 10 % of the way
//     to the threshold, it says "not enough history". The result carries the
//     chosen model, its backtest error, every candidate, and the Crossing of
//     the threshold: observed and fitted first and sustained crossings and
//     the interval of the sustained one; CrossingAt gives other thresholds.
//     CapacityForecast sets the threshold from rated capacity and an
//     end-of-life fraction; ObservedCrossing reads crossings off the data.
//     CycleDate turns a cycle into a date at a usage rate.
//   - ResistanceRise (rise over baseline, Theil-Sen slope against cycles),
//     CellImbalanceMV, DaysHeldFull (storage warning input), and
//     PackStatus(readings, thresholds) -> serviceable / watch / retire with
//     stable reason codes.
//
// # Propellers and airframes
//
//   - PropellerStatus: hours and revolutions since fitted; any strike since
//     fitting (or a set limit) makes replacement due at once.
//   - TheilSen(x, y) robust line; Trend(values, lastN, limitPct) flags a
//     relative rise 100 slope (N-1) / baseline median over the last N
//     flights beyond the limit (efficiency index, vibration).
package wear
