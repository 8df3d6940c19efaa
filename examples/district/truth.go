package district

import (
	"fmt"
	"math"
)

// Measure names one of the two measurements in the survey.
type Measure string

// The two measures of the survey.
const (
	Weight Measure = "weight" // kilograms, column weight_kg
	Length Measure = "length" // centimetres, length or height, column length_cm
)

// MaxAgeMonths is the upper end of the surveyed ages; the true model is
// defined on [0, MaxAgeMonths].
const MaxAgeMonths = 60.0

// lZero is the |L| below which the Box–Cox transform is taken as its L = 0
// limit, y = M exp(S z); closer to zero, (1+LSz)^(1/L) loses digits to
// cancellation and the limit is the better value.
const lZero = 1e-10

// form is the invented curve shape f(t) = c0 + c1 (1 - exp(-t/r)) + c2 t.
type form struct{ c0, c1, r, c2 float64 }

func (f form) at(t float64) float64 {
	return f.c0 + f.c1*(-math.Expm1(-t/f.r)) + f.c2*t
}

// lms holds the three curves of one measure and sex.
type lms struct{ l, m, s form }

// The true curves. All coefficients are invented for this demo (see doc.go);
// r is in months. For L, c1 = 0 makes r irrelevant and it is set to 1.
var (
	weightF = lms{
		l: form{c0: 0.22, c1: -0.42, r: 16, c2: 0},      // 0.22 at birth to about -0.19
		m: form{c0: 3.25, c1: 4.9, r: 6.3, c2: 0.165},   // 3.25 kg to 18.05 kg
		s: form{c0: 0.138, c1: -0.03, r: 5, c2: 0.0004}, // 0.138, dip to about 0.115, 0.132
	}
	weightM = lms{
		l: form{c0: 0.25, c1: -0.45, r: 18, c2: 0},      // 0.25 at birth to about -0.18
		m: form{c0: 3.35, c1: 5.35, r: 6, c2: 0.16},     // 3.35 kg to 18.30 kg
		s: form{c0: 0.135, c1: -0.03, r: 5, c2: 0.0004}, // 0.135, dip to about 0.112, 0.129
	}
	lengthF = lms{
		l: form{c0: 0.7, c1: 0, r: 1, c2: -0.009},         // 0.70 to 0.16
		m: form{c0: 49.3, c1: 25.74, r: 9.3, c2: 0.56},    // 49.3 cm to 108.6 cm
		s: form{c0: 0.045, c1: -0.007, r: 6, c2: 0.00005}, // 0.045, dip to 0.039, 0.041
	}
	lengthM = lms{
		l: form{c0: 0.8, c1: 0, r: 1, c2: -0.01},          // 0.80 to 0.20
		m: form{c0: 50.0, c1: 26.53, r: 9, c2: 0.55},      // 50.0 cm to 109.5 cm
		s: form{c0: 0.044, c1: -0.007, r: 6, c2: 0.00005}, // 0.044, dip to 0.038, 0.040
	}
)

func curves(measure Measure, sex string) lms {
	switch {
	case measure == Weight && sex == "F":
		return weightF
	case measure == Weight && sex == "M":
		return weightM
	case measure == Length && sex == "F":
		return lengthF
	case measure == Length && sex == "M":
		return lengthM
	}
	panic(fmt.Sprintf("district: unknown measure %q or sex %q (want weight/length and F/M)", measure, sex))
}

func checkAge(ageMonths float64) {
	if !(ageMonths >= 0 && ageMonths <= MaxAgeMonths) {
		panic(fmt.Sprintf("district: age %v months outside [0, %v]", ageMonths, MaxAgeMonths))
	}
}

// TrueLMS returns the true L, M and S of measure for sex ("F" or "M") at
// ageMonths in [0, 60]. It panics on any other measure, sex or age: the
// arguments come from the caller's code, not from a user.
func TrueLMS(measure Measure, sex string, ageMonths float64) (l, m, s float64) {
	c := curves(measure, sex)
	checkAge(ageMonths)
	return c.l.at(ageMonths), c.m.at(ageMonths), c.s.at(ageMonths)
}

// TrueQuantile returns the true tau-quantile of measure for sex ("F" or "M")
// at ageMonths in [0, 60]:
//
//	y = M (1 + L S z)^(1/L),  z = Phi^-1(tau)
//
// For tails so far out (|z| above about 20) that 1 + L S z <= 0, it returns
// the limit of the distribution there: 0 at the lower end (L > 0) and +Inf
// at the upper end (L < 0). It panics when tau is not inside (0, 1) or on a
// bad measure, sex or age, as TrueLMS does.
func TrueQuantile(measure Measure, sex string, ageMonths, tau float64) float64 {
	if !(tau > 0 && tau < 1) {
		panic(fmt.Sprintf("district: tau %v outside (0, 1)", tau))
	}
	l, m, s := TrueLMS(measure, sex, ageMonths)
	return boxCoxValue(l, m, s, normalQuantile(tau))
}

// boxCoxValue maps a z-score to the measurement scale (Cole 1990).
func boxCoxValue(l, m, s, z float64) float64 {
	if math.Abs(l) < lZero {
		return m * math.Exp(s*z)
	}
	base := 1 + l*s*z
	if base <= 0 {
		if l > 0 {
			return 0
		}
		return math.Inf(1)
	}
	return m * math.Pow(base, 1/l)
}

// normalQuantile is Phi^-1(p) for the standard normal, through the inverse
// complementary error function, which keeps its relative accuracy in both
// tails: Phi^-1(p) = -sqrt(2) erfcinv(2p).
func normalQuantile(p float64) float64 {
	return -math.Sqrt2 * math.Erfcinv(2*p)
}
