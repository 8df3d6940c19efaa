package cohort

import "errors"

// Errors of Compare, CompareTwo and CompareReferences; test with errors.Is.
var (
	// ErrOptions: unusable options (band edges, level).
	ErrOptions = errors.New("cohort: invalid options")
	// ErrData: columns of different lengths, or no row that can be scored.
	ErrData = errors.New("cohort: unusable data")
	// ErrNoCommon: two references without a common stratum or age range.
	ErrNoCommon = errors.New("cohort: the references have nothing in common")
)
