package curve

import (
	"fmt"
	"math"
)

// Age scale kinds. The zero AgeScale (Kind "") is the identity.
const (
	ScaleIdentity = "identity"
	ScaleLog      = "log"
	ScalePower    = "power"
)

// Apply returns T(age), the transformed age on which the B-spline basis is
// defined:
//
//	identity: T(age) = age
//	log:      T(age) = log(age + Shift),  needs age + Shift > 0
//	power:    T(age) = age^Power,         needs age >= 0 and Power > 0
//
// Every kind is strictly increasing on its domain, so centile curves keep
// their order and knots at quantiles of T(age) are knots at quantiles of
// age. A transform that compresses the fast-changing early ages (log or a
// power below one) lets the knots and the penalty treat infancy and later
// childhood alike; growth references have long fitted their curves in a
// power of age (Cole, Freeman & Preece 1998, from memory).
//
// Apply returns an error wrapping ErrAgeScale for an invalid scale and one
// wrapping ErrAgeDomain for a NaN or infinite age or an age outside the
// domain; it never panics.
//
// References:
//   - Cole T J, Freeman J V, Preece M A (1998). British 1990 growth reference
//     centiles for weight, height, body mass index and head circumference
//     fitted by maximum penalized likelihood. Statistics in Medicine 17,
//     407–429.
func (s AgeScale) Apply(age float64) (float64, error) {
	if err := s.validate(); err != nil {
		return 0, err
	}
	if math.IsNaN(age) || math.IsInf(age, 0) {
		return 0, fmt.Errorf("%w: age %v", ErrAgeDomain, age)
	}
	switch s.Kind {
	case "", ScaleIdentity:
		return age, nil
	case ScaleLog:
		a := age + s.Shift
		if !(a > 0) {
			return 0, fmt.Errorf("%w: log scale needs age + shift > 0, got age %v, shift %v", ErrAgeDomain, age, s.Shift)
		}
		return math.Log(a), nil
	default: // ScalePower; validate rejected anything else
		if age < 0 {
			return 0, fmt.Errorf("%w: power scale needs age >= 0, got %v", ErrAgeDomain, age)
		}
		return math.Pow(age, s.Power), nil
	}
}

// validate reports an unknown kind or unusable parameters, wrapping
// ErrAgeScale.
func (s AgeScale) validate() error {
	switch s.Kind {
	case "", ScaleIdentity:
		if s.Shift != 0 || s.Power != 0 {
			return fmt.Errorf("%w: the identity scale takes no shift or power", ErrAgeScale)
		}
	case ScaleLog:
		if math.IsNaN(s.Shift) || math.IsInf(s.Shift, 0) {
			return fmt.Errorf("%w: log shift %v", ErrAgeScale, s.Shift)
		}
		if s.Power != 0 {
			return fmt.Errorf("%w: the log scale takes no power", ErrAgeScale)
		}
	case ScalePower:
		if !(s.Power > 0) || math.IsInf(s.Power, 0) {
			return fmt.Errorf("%w: power must be positive and finite, got %v", ErrAgeScale, s.Power)
		}
		if s.Shift != 0 {
			return fmt.Errorf("%w: the power scale takes no shift", ErrAgeScale)
		}
	default:
		return fmt.Errorf("%w: unknown kind %q (want %q, %q or %q)", ErrAgeScale, s.Kind, ScaleIdentity, ScaleLog, ScalePower)
	}
	return nil
}

// normal returns s with the empty kind spelled out, as stored in a Reference.
func (s AgeScale) normal() AgeScale {
	if s.Kind == "" {
		s.Kind = ScaleIdentity
	}
	return s
}

// invert returns the age with T(age) = t, for t in the image of the scale.
func (s AgeScale) invert(t float64) float64 {
	switch s.Kind {
	case ScaleLog:
		return math.Exp(t) - s.Shift
	case ScalePower:
		return math.Pow(t, 1/s.Power)
	}
	return t
}
