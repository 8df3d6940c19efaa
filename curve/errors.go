package curve

import "errors"

// Errors returned for unusable references, reference files and look-ups.
// They are wrapped with context; test with errors.Is.
var (
	// ErrUnknownStratum: the stratum name is not in the reference; the
	// message lists the known ones.
	ErrUnknownStratum = errors.New("curve: unknown stratum")
	// ErrAgeRange: the age lies outside the fitted age range of the stratum
	// (references are never extrapolated in age), or is NaN.
	ErrAgeRange = errors.New("curve: age outside the reference's range")
	// ErrTauRange: a tau outside the fitted tau grid, or not in (0,1).
	ErrTauRange = errors.New("curve: tau outside the fitted tau grid")
	// ErrValue: a measurement that is NaN or infinite.
	ErrValue = errors.New("curve: measurement is not a finite number")
	// ErrDegenerate: all fitted centiles coincide at the age, so a
	// measurement cannot be placed among them.
	ErrDegenerate = errors.New("curve: fitted centiles coincide at this age")
	// ErrInvalid: a reference whose content is inconsistent (knots, taus,
	// coefficients, ages, settings).
	ErrInvalid = errors.New("curve: invalid reference")
	// ErrNotReference: a file that is not a growband reference file.
	ErrNotReference = errors.New("curve: not a growband reference file")
	// ErrVersion: a reference file written by a newer format version.
	ErrVersion = errors.New("curve: reference file format is newer than this program reads")
	// ErrMalformed: a reference file that is not valid JSON, is truncated,
	// or holds unknown or mistyped fields.
	ErrMalformed = errors.New("curve: malformed reference file")
	// ErrDamaged: a reference file whose checksum does not match its content.
	ErrDamaged = errors.New("curve: reference file is damaged (checksum mismatch)")
	// ErrData: unusable measurement data (for example columns of different
	// lengths) or diagnostic settings.
	ErrData = errors.New("curve: unusable data")
)
