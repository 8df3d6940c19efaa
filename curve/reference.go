package curve

import (
	"time"

	"growband/spline"
)

// FormatVersion is the version of the reference file written by Save. Load
// refuses files of a newer version.
const FormatVersion = 2

// Caution is written into every reference, table, chart and report.
const Caution = "This reference describes the sample it was built from. It is not a " +
	"diagnosis: clinical decisions follow local guidelines and a qualified clinician."

// Reference is a fitted growth reference: everything needed to score a
// measurement without the data it was built from. It is the content of the
// reference file (JSON, see Save and Load).
type Reference struct {
	Format    string    `json:"format"`  // always "growband-reference"
	Version   int       `json:"version"` // FormatVersion at writing
	Measure   string    `json:"measure"` // e.g. "weight"
	Unit      string    `json:"unit"`    // e.g. "kg"
	AgeUnit   string    `json:"age_unit"`
	AgeScale  AgeScale  `json:"age_scale"`
	Degree    int       `json:"degree"`
	Created   time.Time `json:"created"`
	InputHash string    `json:"input_hash"` // hex SHA-256 of the input rows used
	Caution   string    `json:"caution"`
	// Tails is the z-score rule beyond ±3 SD of LMS-table strata: "" or
	// TailsPlain for the Box–Cox formula throughout, TailsRestricted for the
	// restricted extension (see LoadLMSTable). Fitted strata ignore it.
	Tails  string    `json:"tails,omitempty"`
	Strata []Stratum `json:"strata"`
}

// AgeScale is the age transformation T used inside the basis: "identity",
// "log" (log(age + Shift)) or "power" (age^Power).
type AgeScale struct {
	Kind  string  `json:"kind"`
	Shift float64 `json:"shift,omitempty"`
	Power float64 `json:"power,omitempty"`
}

// Stratum is the fit for one group (for example one sex).
type Stratum struct {
	Name   string  `json:"name"`    // stratum label; "" when the data have none
	N      int     `json:"n"`       // rows used
	AgeMin float64 `json:"age_min"` // fitted range in age units
	AgeMax float64 `json:"age_max"`
	// Knots is the full clamped knot vector on the transformed age scale.
	Knots []float64 `json:"knots"`
	// Taus is the sorted tau grid; Coef[k] holds the B-spline coefficients of
	// the curve at Taus[k], ordered so Coef[k] <= Coef[k+1] componentwise.
	Taus []float64   `json:"taus"`
	Coef [][]float64 `json:"coef"`
	// Chart lists the chart centiles as tau values (each also in Taus).
	Chart      []float64  `json:"chart"`
	Smoothness Smoothness `json:"smoothness"`
	Flags      []Flag     `json:"flags,omitempty"`
	// Bands holds bootstrap pointwise intervals per chart centile; nil when no
	// bootstrap was asked for.
	Bands []Band `json:"bands,omitempty"`
	// LMS, when not nil, makes this a stratum of an external LMS table (see
	// LoadLMSTable): the centiles come from the tabulated L, M and S, Knots
	// and Coef are empty, and Taus equals Chart.
	LMS *LMSCurve `json:"lms,omitempty"`
	// Tail models the distribution beyond the centiles the data support
	// directly (see Tail); nil in an LMS-table stratum, and in files of
	// version 1, for which Load fits it from the curves.
	Tail *Tail `json:"tail,omitempty"`
	// Conditional, when not nil, is the model of growth since the previous
	// visit (see FitConditional).
	Conditional *Conditional `json:"conditional,omitempty"`

	// checked records that Reference.ready validated an LMS stratum.
	checked bool `json:"-"`
	// basis caches the B-spline basis on Knots, set by Reference.ready (Load)
	// before the reference is shared; nil means each look-up builds one.
	basis *spline.Basis `json:"-"`
}

// LMSCurve is a tabulated LMS reference for one stratum: at age Ages[i] the
// measurement is Box–Cox normal with power L[i], median M[i] and coefficient
// of variation S[i] (Cole 1990). Ages are strictly increasing, M and S
// positive; between tabulated ages the three are interpolated linearly.
type LMSCurve struct {
	Ages []float64 `json:"ages"`
	L    []float64 `json:"l"`
	M    []float64 `json:"m"`
	S    []float64 `json:"s"`
}

// Candidate is one smoothness value tried and its criterion value (lower
// is better); SE is the standard error of a cross-validated score.
type Candidate struct {
	InteriorKnots int     `json:"interior_knots"`
	Lambda        float64 `json:"lambda"`
	Score         float64 `json:"score"`
	SE            float64 `json:"se,omitempty"`
	EDF           int     `json:"edf,omitempty"`
}

// Data holds measurement rows column-wise. Weight, Stratum and Subject may be
// nil (all 1, one stratum, no subject ids).
type Data struct {
	Age     []float64
	Value   []float64
	Weight  []float64
	Stratum []string
	Subject []string
}
