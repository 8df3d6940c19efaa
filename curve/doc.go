// Package curve builds age-indexed growth references from measurements and
// scores new measurements against them.
//
// Each centile curve is a quantile regression on a cubic B-spline basis in a
// transformed age t = T(age):
//
//	Q_tau(age) = B(T(age))' b_tau
//
// fitted by curve/solver. Because B-spline functions are non-negative and sum
// to one, coefficients ordered across tau (b_tau_k <= b_tau_k+1 componentwise)
// make the curves ordered at every age: non-crossing is imposed as solver
// constraints, not checked afterwards.
//
// The fitted curves describe the body of each stratum's distribution, the
// centiles its data support directly. Beyond the body a Box–Cox normal
// fitted at each age to every body centile, its power smoothed across age,
// carries the distribution out to any z (Tail):
//
//	body:    z = Phi^-1(tau), the level interpolated among the fitted quantiles
//	beyond:  z = Phi^-1(tau_edge) + Zbc(v) - Zbc(q_edge)
//
// So the outermost z-scores borrow strength from all centiles instead of
// resting on the two outermost curves. Why this model rather than a quantile
// sheet (a tensor-product surface over age and tau fitted with the summed
// check loss, Schnabel & Eilers 2013, AStA Advances in Statistical Analysis
// 97, 77–87): the sheet's linear programme has one row per observation and
// tau, which at registry sizes (10^7 rows, tens of taus) is beyond this
// machine's time and memory, while the per-tau grid already scales and stays
// exact; the tail fit works on the fitted curves, so its cost does not grow
// with n. Measured in tail_test.go on a Box–Cox normal truth (weight-like,
// 0–60 months, n = 20,000): children with 2 <= |true z| <= 3.5 scored 0.041 z
// off on average, against 0.113 for the former rule (the line through the
// two outermost fitted quantiles, extended); on truths that are not Box–Cox
// normal (a skewed mixture, a height model whose skewness changes sign
// through puberty; 15,000 a sex) the chart centiles were 0.026–0.042 z off
// on average, 0.050–0.073 for a Box–Cox normal fitted to the same data by
// maximum likelihood (through Build with the command's defaults).
//
// A measurement is scored by locating it among the fitted quantiles at its
// age (or in the tail model beyond them) and mapping its level to a z-score,
// z = Phi^-1(centile).
//
// Build is the whole pipeline that `growband build` runs: the robust
// implausibility screen (RobustZ), the age scale chosen from the data
// (ChooseAgeScale), Fit, and the edge checks (CheckEdges). Non-crossing,
// smoothness choice, the sample-size guard and the bootstrap bands are
// documented on NonCrossConstrain, Smoothness, Flag and Band.
//
// Scale. Build holds each row it uses once, grouped by stratum and sorted
// by age: its input row number, age, value and weight (32 bytes; T(age)
// another 8 unless the age scale is the identity). The stratum being fitted
// adds its B-spline design row (40 bytes for cubics; penalty rows are kept
// past them, so penalized solver tables share the design) and, for each of
// the two halves of its tau grid solved at once, the solver's copy of the
// responses with the two costs of each row and its scale and sign for the
// reduction (about 29 bytes). Above 2,000,000 rows the strata are fitted
// one after another and the garbage collector's target is lowered while
// Build runs (see Build). Measured peak memory through Build with the
// command's defaults (/usr/bin/time -v, a shared 2-core machine): 1.58 to
// 1.70 GB resident for 10,000,000 rows in two strata, about 170 bytes per
// input row, of which the caller's Data holds 32 (ages, values, stratum
// labels); 0.45 to 0.51 GB for 1,000,000 rows. Smoothness is chosen on a
// sample of SelectRows rows of each larger stratum, so beyond that size the
// time grows with the final grid: one pass over the rows per tau, plus an
// interior point on a band of about 2*sqrt(p*n) rows.
package curve
