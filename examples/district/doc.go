// Package district generates the invented survey used by the growband demo:
// weight and length/height of about 6,000 children aged 0–60 months seen at
// the four clinics of Tarnwick District, a place that does not exist. The
// data come from a known model, so fitted centiles can be compared with the
// truth, and carry a small, documented set of recording errors, so that an
// exclusion report has something to find.
//
// # Scenario
//
// Tarnwick District has a town area and a hill area, the two survey strata.
// Town children were sampled more densely, so each carries a smaller survey
// weight:
//
//	clinic                area   share  sex coded as          survey weight
//	Tarnwick Town Clinic  town   35%    "F" / "M"             1.25
//	Eastquay Clinic       town   25%    "F" / "M"             1.25
//	Fellside Health Post  hills  22%    "F" / "M"             3.40
//	Highmoor Mobile Team  hills  18%    "1" male, "2" female  3.40
//
// The true model is the same in both areas, so weighted and unweighted fits
// aim at the same curves; the weights change only the precision.
//
// About 30% of children (3 in 10) were seen 2, 3 or 4 times, 45 to 200 days
// apart; the rest once. Each row has a birth date and a visit date, and
// age_months is computed from them as days / (365.25/12), rounded to two
// decimals. The first visit of a single-visit child falls at a uniform day of
// age in the first year with probability 1/5 and in the first five years
// otherwise, so infants, where growth is fastest, are somewhat over-sampled.
// First visits are dated 2023-01-02 plus 0–599 days.
//
// # True model
//
// For measure m, sex x and age t in months, the value is Box–Cox–normal
// (Cole 1990):
//
//	y = M(t) * (1 + L(t) S(t) z)^(1/L(t))   (y = M exp(S z) when L = 0)
//
// with z standard normal. Each of L, M and S is a curve of the invented form
//
//	f(t) = c0 + c1 (1 - exp(-t/r)) + c2 t
//
// (a saturating early rise plus a steady later trend), whose coefficients
// are listed in truth.go. They are made up for this demo to look plausible
// (median weight about 3.3 kg at birth to 18 kg at 60 months, length/height
// 50 cm to 109 cm) and are not taken from any published growth standard.
// Length and height form one smooth curve: there is no step at 24 months.
// Values are rounded to 0.1 kg and 0.1 cm.
//
// A child has one z per measure, persistent across visits: the length z is
// standard normal, the weight z is 0.6 times it plus 0.8 times an independent
// standard normal, and from visit to visit each drifts as z' = 0.95 z +
// sqrt(1 - 0.95^2) e with e standard normal, which keeps every visit's z
// standard normal. So each row, taken alone, follows the true model exactly.
//
// # Recording errors
//
// A fixed number of rows carry one deliberate error each (Row.Fault); they
// are picked at random among the generated rows, 131 in all, about 1.4%:
//
//	kind                rows  what the file shows
//	missing             84    an empty weight_kg (even picks) or length_cm cell
//	not-a-number        30    in turn: weight "12,4"-style decimal comma,
//	                          length "76,3"-style, weight "n/a", length "n/a",
//	                          weight "?"
//	grams               3     weight in grams: "12400" for 12.4 kg
//	dates-swapped       3     birth and visit dates exchanged: negative
//	                          age_months
//	duplicate           3     an exact copy of the row just before it
//	impossible-length   3     decimal point lost: "765" for 76.5 cm
//	implausible-weight  5     decimal point lost ("124" for 12.4 kg, 3 rows)
//	                          or shifted ("1.24", 2 rows)
//
// Row.Clean tells whether a row is usable for a build of one measure: 9,508
// of the 9,582 rows are usable for weight.
//
// # Determinism
//
// Everything is drawn from one PCG generator (math/rand/v2 NewPCG) with a
// fixed seed. Uniforms, integers and normals are derived from its 64-bit
// outputs by this package's own short conversions (random.go) rather than by
// rand.Rand's methods, so the bytes depend only on the PCG algorithm, which
// is fixed by its specification, and on this code. Floating-point functions
// may differ in the last bit between machines; after rounding to 0.1 that
// changes nothing short of a value landing exactly on a rounding boundary.
//
// References:
//   - Box G E P, Muller M E (1958). A note on the generation of random normal
//     deviates. Annals of Mathematical Statistics 29, 610–611.
//   - Cole T J (1990). The LMS method for constructing normalized growth
//     standards. European Journal of Clinical Nutrition 44, 45–60.
//   - Cole T J, Green P J (1992). Smoothing reference centile curves: the LMS
//     method and penalized likelihood. Statistics in Medicine 11, 1305–1319.
//   - Lemire D (2019). Fast random integer generation in an interval. ACM
//     Transactions on Modeling and Computer Simulation 29(1), 3.
//   - O'Neill M E (2014). PCG: a family of simple fast space-efficient
//     statistically good algorithms for random number generation. Harvey
//     Mudd College, HMC-CS-2014-0905.
package district
