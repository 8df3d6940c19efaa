package render

import (
	"errors"
	"fmt"
	"math"
)

// Sentinel errors. Constructors wrap them with the place the problem was
// found, for example "centile 50: ages 12, values 11: render: lengths differ".
var (
	ErrEmpty     = errors.New("render: nothing to draw")
	ErrLength    = errors.New("render: lengths differ")
	ErrNaN       = errors.New("render: value is NaN or infinite")
	ErrCentile   = errors.New("render: centile must lie strictly between 0 and 100")
	ErrDuplicate = errors.New("render: centile given twice")
	ErrOrder     = errors.New("render: ages must increase")
	ErrTooFew    = errors.New("render: too few values")
	ErrFormat    = errors.New("render: unknown output format")
	ErrSize      = errors.New("render: width and height must be positive")
)

// checkFinite reports the first NaN or infinite entry of xs.
func checkFinite(name string, xs []float64) error {
	for i, x := range xs {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return fmt.Errorf("%s[%d] = %v: %w", name, i, x, ErrNaN)
		}
	}
	return nil
}

// checkPairs checks that xs and ys have equal lengths and finite entries.
func checkPairs(xname string, xs []float64, yname string, ys []float64) error {
	if len(xs) != len(ys) {
		return fmt.Errorf("%s %d, %s %d: %w", xname, len(xs), yname, len(ys), ErrLength)
	}
	if err := checkFinite(xname, xs); err != nil {
		return err
	}
	return checkFinite(yname, ys)
}

// checkIncreasing checks that ages increase strictly.
func checkIncreasing(name string, xs []float64) error {
	for i := 1; i < len(xs); i++ {
		if !(xs[i] > xs[i-1]) {
			return fmt.Errorf("%s[%d] = %v after %v: %w", name, i, xs[i], xs[i-1], ErrOrder)
		}
	}
	return nil
}
