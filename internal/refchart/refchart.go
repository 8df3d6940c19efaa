package refchart

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/curve"
	"growband/render"
)

// DefaultPoints is the number of ages a curve is drawn through when
// Options.Points is 0: enough that a cubic spline looks smooth at print
// size.
const DefaultPoints = 241

// sdLevels are the whole-SD curves Options.SDCurves adds (common practice in
// growth monitoring: -3, -2, +2 and +3 SD).
var sdLevels = []float64{-3, -2, 2, 3}

// ErrAges is returned for an age range that does not overlap the stratum's
// fitted range.
var ErrAges = errors.New("refchart: the ages asked for lie outside the fitted range")

// Options of Centiles. The zero value, and nil, mean the whole fitted age
// range, DefaultPoints ages, the chart centiles with their bootstrap bands
// and no SD curves.
type Options struct {
	// AgeLo and AgeHi restrict the chart to a part of the fitted age range;
	// both 0 means all of it. The range is clipped to the fitted one.
	AgeLo, AgeHi float64
	// Points is the number of ages per curve; 0 means DefaultPoints.
	Points int
	// SDCurves adds dashed curves at -3, -2, +2 and +3 SD.
	SDCurves bool
	// Centiles, when not nil, replaces the stratum's chart centiles (tau in
	// (0,1)).
	Centiles []float64
}

// Centiles returns the centile chart input of stratum st of r, and notes
// for the user (an SD curve the tau grid does not reach, a clipped age
// range). Errors wrap ErrAges, or come from curve's Table.
func Centiles(r *curve.Reference, st *curve.Stratum, opt *Options) (*render.Centiles, []string, error) {
	var o Options
	if opt != nil {
		o = *opt
	}
	var notes []string
	lo, hi := st.AgeMin, st.AgeMax
	if o.AgeLo != 0 || o.AgeHi != 0 {
		lo, hi = max(o.AgeLo, st.AgeMin), min(o.AgeHi, st.AgeMax)
		if !(lo < hi) {
			return nil, nil, fmt.Errorf("%w: %g–%g asked for, %g–%g fitted", ErrAges, o.AgeLo, o.AgeHi, st.AgeMin, st.AgeMax)
		}
		if lo != o.AgeLo || hi != o.AgeHi {
			notes = append(notes, fmt.Sprintf("ages %g–%g asked for, drawn over the fitted %s–%s", o.AgeLo, o.AgeHi, short(lo), short(hi)))
		}
	}
	n := o.Points
	if n < 2 {
		n = DefaultPoints
	}
	ages := make([]float64, n)
	for i := range ages {
		ages[i] = lo + (hi-lo)*float64(i)/float64(n-1)
	}
	ages[n-1] = hi
	taus := o.Centiles
	if taus == nil {
		taus = st.Chart
	}
	c := &render.Centiles{Measure: r.Measure, Unit: r.Unit, AgeUnit: r.AgeUnit, Stratum: st.Name, Caution: curve.Caution}
	if err := addCurves(c, r, st, ages, taus, nil); err != nil {
		return nil, nil, err
	}
	for i := range c.Curves {
		for _, bd := range st.Bands {
			if bd.Tau == taus[i] {
				c.Curves[i].Band = clipBand(bd, lo, hi)
			}
		}
	}
	if o.SDCurves {
		// The reference's distribution reaches every z (beyond its body the
		// tail model carries it, curve.Tail), so every whole-SD curve is
		// drawn; one the tail model cannot give (a measure whose Box–Cox
		// tail ends first) is left out with a note.
		for _, z := range sdLevels {
			tau := distuv.UnitNormal.CDF(z)
			label := strings.Replace(fmt.Sprintf("%+g SD", z), "-", "−", 1) // a minus sign
			if err := addCurves(c, r, st, ages, []float64{tau}, []string{label}); err != nil {
				notes = append(notes, fmt.Sprintf("the %+g SD curve of %s is not drawn: %v", z, nameOr(st.Name), err))
			}
		}
	}
	return c, notes, nil
}

// addCurves evaluates the centiles taus of st on ages and appends them to c;
// labels, when not nil, marks them as dashed curves with those end labels.
func addCurves(c *render.Centiles, r *curve.Reference, st *curve.Stratum, ages, taus []float64, labels []string) error {
	tab, err := r.Table(st.Name, ages, taus)
	if err != nil {
		return err
	}
	for j, tau := range taus {
		cv := render.Curve{Centile: tidy(100 * tau), Ages: ages, Values: make([]float64, len(ages))}
		for i := range ages {
			cv.Values[i] = tab.Values[i][j]
		}
		if labels != nil {
			cv.Label, cv.Dashed = labels[j], true
		}
		c.Curves = append(c.Curves, cv)
	}
	return nil
}

// Curves returns the centiles taus (nil: the chart centiles) of stratum st
// of r on ages, as overlay curves for another stratum's chart.
func Curves(r *curve.Reference, st *curve.Stratum, ages, taus []float64) ([]render.Curve, error) {
	if taus == nil {
		taus = st.Chart
	}
	var c render.Centiles
	if err := addCurves(&c, r, st, ages, taus, nil); err != nil {
		return nil, err
	}
	return c.Curves, nil
}

// clipBand keeps the part of a bootstrap band inside [lo, hi]; nil when
// fewer than two of its ages remain.
func clipBand(b curve.Band, lo, hi float64) *render.Band {
	out := &render.Band{}
	for k, a := range b.Ages {
		if a >= lo && a <= hi {
			out.Ages = append(out.Ages, a)
			out.Lo = append(out.Lo, b.Lo[k])
			out.Hi = append(out.Hi, b.Hi[k])
		}
	}
	if len(out.Ages) < 2 {
		return nil
	}
	return out
}

// tidy rounds x to 12 significant digits so a centile such as 100*0.03
// reads 3.
func tidy(x float64) float64 {
	y, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 12, 64), 64)
	return y
}

func centileText(c float64) string {
	return strconv.FormatFloat(tidy(math.Round(c*1000)/1000), 'f', -1, 64)
}

func short(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }

func nameOr(s string) string {
	if s == "" {
		return "the reference"
	}
	return "stratum " + s
}
