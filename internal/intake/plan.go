package intake

import (
	"math"
	"os"
	"path/filepath"
)

// Plan is a parsed plan file with every default applied; PLAN.md documents
// each key. A Plan comes from LoadPlan or ParsePlan; its Spec method gives
// the settings for reading the input file.
type Plan struct {
	Name string // plan file name, for messages
	Dir  string // directory that relative paths are resolved against

	Input     Input
	Measure   Measure
	Fit       Fit
	Plausible Plausible
	Table     AgeGrid
	Output    Output

	Conditional *Conditional // nil when the plan has no [conditional] table
	Covariates  *Covariates  // nil when the plan has no [covariates] table
}

// Input is the [input] table: where the data are and how to read them.
type Input struct {
	File     string // resolved against Plan.Dir
	Age      string // age column, or "" when Birth and Measured are used
	Birth    string
	Measured string
	Value    string
	Stratum  string
	Subject  string
	Weight   string

	Unit         string // unit of the value column; defaults to Measure.Unit
	Delimiter    rune   // 0 = detect
	Decimal      Decimal
	Missing      []string
	DateFormat   string
	StratumCodes map[string]string // nil = labels as written
	Sheet        string            // worksheet of an Excel workbook; "" = the first
}

// Measure is the [measure] table.
type Measure struct {
	Name    string // e.g. "weight"; defaults to the value column's name
	Unit    string // e.g. "kg"; "" = unitless
	AgeUnit string // days, weeks, months or years
}

// Fit is the [fit] table: how the centile curves are fitted.
type Fit struct {
	Centiles []float64 // chart centiles in percent, increasing, in (0, 100)
	Knots    Knots
	Penalty  Penalty
	AgeScale AgeScale
	AgeRange Range // the reference's stated age range; zero = the data's
	// AcceptEdges is fit.accept_edge_problems: build even when the curves
	// tie, hook or bend at some age (the problems are reported).
	AcceptEdges bool
	Bootstrap   int   // bootstrap replicates; 0 = none
	Seed        int64 // random seed for bootstrap and cross-validation
}

// Knots is fit.knots: chosen automatically, a count of interior knots, or
// interior knots at given ages (At non-nil, increasing, in age units).
type Knots struct {
	Auto  bool
	Count int
	At    []float64
}

// Penalty is fit.penalty: chosen automatically or a fixed non-negative
// weight Lambda of the roughness penalty.
type Penalty struct {
	Auto   bool
	Lambda float64
}

// AgeScale is fit.age_scale with fit.age_offset. Kind is "auto" (chosen
// from the data), "identity", "log" (log(age + Shift)) or "power"
// (age^Power). AutoShift means the fitting
// code chooses Shift.
type AgeScale struct {
	Kind      string
	Power     float64
	Shift     float64
	AutoShift bool
}

// Plausible is the [plausible] table: limits beyond which a row is
// excluded. Zero Ranges mean no limit; Z = 0 means no first-pass check.
type Plausible struct {
	Value Range   // in Measure.Unit
	Age   Range   // in Measure.AgeUnit
	Z     float64 // exclude rows with |z| > Z against a first-pass fit
}

// AgeGrid is the [table] table: ages of the output table, From to To by
// Step. Set is false when the plan leaves the grid to the program.
type AgeGrid struct {
	From, To, Step float64
	Set            bool
}

// Output is the [output] table.
type Output struct {
	Charts []string // formats among "svg", "png", "pdf"; empty = no charts
	Points bool     // draw the data points on charts
	// SDCurves draws the curves at -3, -2, +2 and +3 SD on the build's
	// charts as well.
	SDCurves bool
}

// Defaults applied by ParsePlan.
var (
	// DefaultCentiles are the chart centiles in percent (common practice).
	DefaultCentiles = []float64{3, 10, 25, 50, 75, 90, 97}
)

const (
	// DefaultZLimit is the first-pass implausibility limit |z| > 5 (common
	// practice for flagging biologically implausible values).
	DefaultZLimit = 5
	// DefaultSeed is the random seed when fit.seed is not given.
	DefaultSeed = 1
	// maxKnotCount, maxBootstrap and maxGridPoints bound plan values so a
	// typo cannot ask for a job that never ends.
	maxKnotCount  = 200
	maxBootstrap  = 100000
	maxGridPoints = 1000000
)

// LoadPlan reads and parses the plan file at path; input.file is resolved
// against the plan's directory. Errors name the file and line (see ParsePlan).
func LoadPlan(path string) (*Plan, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return ParsePlan(data, path, filepath.Dir(path))
}

// Spec returns the settings for reading the plan's input file.
func (p *Plan) Spec() *Spec {
	return &Spec{
		Age: p.Input.Age, Birth: p.Input.Birth, Measured: p.Input.Measured,
		Value: p.Input.Value, Stratum: p.Input.Stratum, Subject: p.Input.Subject, Weight: p.Input.Weight,
		AgeUnit:      p.Measure.AgeUnit,
		Unit:         p.Measure.Unit,
		InputUnit:    p.Input.Unit,
		ValueRange:   p.Plausible.Value,
		AgeRange:     p.Plausible.Age,
		Missing:      p.Input.Missing,
		Decimal:      p.Input.Decimal,
		Delimiter:    p.Input.Delimiter,
		DateFormat:   p.Input.DateFormat,
		StratumCodes: p.Input.StratumCodes,
		Sheet:        p.Input.Sheet,
		Measure:      p.Measure.Name,
	}
}

// ReadInput reads the plan's input file (ReadFile with p.Spec()).
func (p *Plan) ReadInput() (*Table, error) {
	return ReadFile(p.Input.File, p.Spec())
}

// Taus returns the chart centiles as probabilities (centile / 100).
func (p *Plan) Taus() []float64 {
	t := make([]float64, len(p.Fit.Centiles))
	for i, c := range p.Fit.Centiles {
		t[i] = c / 100
	}
	return t
}

var inf = math.Inf(1)
