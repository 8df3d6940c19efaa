package curve

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"growband/internal/ageunit"
)

// ErrEdge: the fitted curves tie or hook at some age, or bend at an end of
// the age range where the data do not (see EdgeProblem); Build returns it
// unless BuildSettings.AcceptEdges.
var ErrEdge = errors.New("curve: centile curves tie, hook or bend where the data do not")

// DefaultScreenZ is the |z| against the screening fit beyond which Build
// excludes a row: common practice in growth monitoring treats |z| > 5 as a
// probable measurement or entry error rather than a real extreme.
const DefaultScreenZ = 5

// NoScreen as BuildSettings.ScreenZ turns the implausibility screen off.
const NoScreen = -1

// BuildSettings tune Build. The zero value, and nil, mean the documented
// defaults.
type BuildSettings struct {
	// Fit are the settings of the reference's fit (see Settings). Its
	// AgeScale may have Kind ScaleAuto: the scale is then chosen from the
	// data (see ChooseAgeScale).
	Fit Settings
	// AutoLogShift, with Fit.AgeScale.Kind = ScaleLog, replaces the shift
	// by one month plus the youngest age's distance below zero (in Fit.AgeUnit).
	AutoLogShift bool
	// ScreenZ is the |z| against the robust screening fit (RobustZ) beyond
	// which a row is excluded before the reference is fitted; 0 means
	// DefaultScreenZ, NoScreen (any negative value) no screen.
	ScreenZ float64
	// AcceptEdges builds the reference even when the edge checks
	// (CheckEdges) report problems; they are then returned in
	// Built.Problems. Otherwise Build fails with ErrEdge.
	AcceptEdges bool
}

// Exclusion says why Build left a row of its data out.
type Exclusion struct {
	Row    int    // index of the row in the Data given to Build
	Reason string // ExcludedAgeRange or ExcludedImplausible
	Z      float64
	Detail string // for example "z = -7.31"
}

// The reasons of an Exclusion.
const (
	ExcludedAgeRange    = "age outside the stated age range"
	ExcludedImplausible = "implausible against the screening fit"
)

// Built is what Build made.
type Built struct {
	Reference *Reference
	// Excluded lists the rows left out, in row order.
	Excluded []Exclusion
	// Used lists the rows of the Data the reference was fitted on, in row
	// order.
	Used []int
	// Scales holds the candidate age scales with their criterion values
	// when the scale was chosen from the data; nil otherwise.
	Scales []ScaleChoice
	// Problems lists what the edge checks found (empty unless accepted).
	Problems []EdgeProblem
}

// Build runs the whole pipeline from measurements to a reference, the one
// `growband build` runs:
//
//  1. rows outside a stated age range (Settings.AgeRange) are excluded;
//  2. the implausibility screen (RobustZ) scores every row against a fit of
//     the central centiles that gross errors cannot pull (on the identity
//     age scale when the scale is automatic), and excludes rows with
//     |z| > ScreenZ;
//  3. with an automatic age scale, the scale is chosen from the data
//     (ChooseAgeScale);
//  4. the reference is fitted on the rows left (Fit);
//  5. the edge checks (CheckEdges) look for tied, hooked or bending curves;
//     a problem fails the build with ErrEdge unless AcceptEdges.
//
// Build returns the errors of Fit, and ErrEdge (wrapped with the list of
// problems) as said. It does not panic on user input.
func Build(d *Data, s *BuildSettings) (*Built, error) {
	if s == nil {
		s = &BuildSettings{}
	}
	if err := d.checkColumns(); err != nil {
		return nil, err
	}
	fs := s.Fit
	if s.AutoLogShift && fs.AgeScale.Kind == ScaleLog {
		fs.AgeScale.Shift = autoLogShift(d.Age, fs.AgeUnit)
	}
	b := &Built{}
	keep := make([]int, 0, len(d.Age))
	if r := fs.AgeRange; r[1] > r[0] {
		for i, a := range d.Age {
			if a < r[0] || a > r[1] {
				b.Excluded = append(b.Excluded, Exclusion{Row: i, Reason: ExcludedAgeRange, Z: math.NaN(),
					Detail: fmt.Sprintf("age %v outside [%v, %v]", a, r[0], r[1])})
				continue
			}
			keep = append(keep, i)
		}
	} else {
		for i := range d.Age {
			keep = append(keep, i)
		}
	}
	data := d.rows(keep)

	if lim := s.ScreenZ; lim >= 0 {
		if lim == 0 {
			lim = DefaultScreenZ
		}
		screenSettings := fs
		if screenSettings.AgeScale.Kind == ScaleAuto {
			screenSettings.AgeScale = AgeScale{}
		}
		z, err := RobustZ(data, &screenSettings)
		if err != nil {
			return nil, fmt.Errorf("implausibility screen: %w", err)
		}
		var left []int
		for j, zj := range z {
			if math.Abs(zj) > lim {
				b.Excluded = append(b.Excluded, Exclusion{Row: keep[j], Reason: ExcludedImplausible, Z: zj,
					Detail: fmt.Sprintf("z = %.2f", zj)})
				continue
			}
			left = append(left, keep[j])
		}
		if len(left) < len(keep) {
			keep = left
			data = d.rows(keep)
		}
	}
	sortExclusions(b.Excluded)
	b.Used = keep

	var ref *Reference
	var problems []EdgeProblem
	var err error
	if fs.AgeScale.Kind == ScaleAuto {
		ref, b.Scales, problems, err = chooseScale(data, &fs)
	} else {
		ref, err = Fit(data, &fs)
		if err == nil {
			problems, err = CheckEdges(ref, data)
		}
	}
	if err != nil {
		return nil, err
	}
	b.Reference = ref
	if len(problems) > 0 {
		if !s.AcceptEdges {
			return nil, edgeError(problems)
		}
		b.Problems = problems
	}
	return b, nil
}

// edgeError lists problems in one error wrapping ErrEdge.
func edgeError(problems []EdgeProblem) error {
	var sb strings.Builder
	for _, p := range problems {
		sb.WriteString("\n  ")
		sb.WriteString(p.String())
	}
	return fmt.Errorf("%w:%s", ErrEdge, sb.String())
}

// autoLogShift is the offset c of log(age + c) chosen for ages: one month
// in the age unit (any name ageunit.Parse reads; "" or an unknown name is
// taken as months), plus the youngest age's distance below zero, so that
// the log spreads the first months without an extreme at birth.
func autoLogShift(ages []float64, ageUnit string) float64 {
	month := 1.0
	if u, err := ageunit.Parse(ageUnit); err == nil {
		month = ageunit.Months.Convert(1, u)
	}
	lo := 0.0
	for _, a := range ages {
		lo = min(lo, a)
	}
	return month - lo
}

// rows returns the rows idx of d as new Data.
func (d *Data) rows(idx []int) *Data {
	if len(idx) == len(d.Age) {
		return d
	}
	out := &Data{Age: make([]float64, len(idx)), Value: make([]float64, len(idx))}
	if d.Weight != nil {
		out.Weight = make([]float64, len(idx))
	}
	if d.Stratum != nil {
		out.Stratum = make([]string, len(idx))
	}
	if d.Subject != nil {
		out.Subject = make([]string, len(idx))
	}
	for k, i := range idx {
		out.Age[k], out.Value[k] = d.Age[i], d.Value[i]
		if d.Weight != nil {
			out.Weight[k] = d.Weight[i]
		}
		if d.Stratum != nil {
			out.Stratum[k] = d.Stratum[i]
		}
		if d.Subject != nil {
			out.Subject[k] = d.Subject[i]
		}
	}
	return out
}

func sortExclusions(e []Exclusion) {
	slices.SortFunc(e, func(a, b Exclusion) int { return cmp.Compare(a.Row, b.Row) })
}

// checkColumns reports no rows or columns of different lengths, as Fit
// does, before Build indexes them.
func (d *Data) checkColumns() error {
	if d == nil || len(d.Age) == 0 {
		return fmt.Errorf("%w: no rows", ErrData)
	}
	n := len(d.Age)
	for _, c := range []struct {
		name string
		l    int
		opt  bool
	}{{"values", len(d.Value), false}, {"weights", len(d.Weight), d.Weight == nil},
		{"stratum labels", len(d.Stratum), d.Stratum == nil}, {"subject ids", len(d.Subject), d.Subject == nil}} {
		if !c.opt && c.l != n {
			return fmt.Errorf("%w: %d ages but %d %s", ErrData, n, c.l, c.name)
		}
	}
	return nil
}
