package cohort

import (
	"fmt"
	"io"
	"math"
	"strings"

	"growband/curve"
	"growband/internal/refchart"
	"growband/render"
)

// namedFigure is a chart and the file it goes to, without the extension.
type namedFigure struct {
	file string
	fig  *render.Figure
}

// charts draws the comparison's charts, per stratum of the reference: the
// distribution of z (weighted when the cohort has survey weights, the
// second cohort overlaid), the normal Q–Q plot, the mean z by age band
// (with bands), the two references' centiles overlaid in the measurement's
// units and their difference in z units (with Against), and the first
// cohort's own centiles (with OwnCentiles). A chart that cannot be drawn
// (too few rows in a stratum) is reported on stderr and left out.
func charts(job *Job, doc *Document, data []*curve.Data, stderr io.Writer) ([]namedFigure, error) {
	ref := job.Ref
	var out []namedFigure
	skip := func(what, stratum string, err error) {
		fmt.Fprintf(stderr, "growband: stratum %q: no %s: %v\n", stratum, what, err)
	}
	for _, st := range ref.Strata {
		stem := stem(st.Name)
		if len(doc.Cohorts) > 0 {
			zs := make([]sampleZ, len(doc.Cohorts))
			for k, r := range doc.Cohorts {
				zs[k] = stratumZ(ref, data[k], r, st.Name)
			}
			if len(zs[0].z) >= 2 {
				zd := &render.ZDist{Measure: ref.Measure, Stratum: st.Name, Cohort: doc.Cohorts[0].Cohort,
					Z: zs[0].z, Weights: zs[0].w, Caution: curve.Caution}
				if len(zs) == 2 && len(zs[1].z) >= 2 {
					zd.Vs = &render.ZSample{Cohort: doc.Cohorts[1].Cohort, Z: zs[1].z, Weights: zs[1].w}
				}
				if fig, err := render.ZDistChart(zd); err != nil {
					skip("z-score distribution", st.Name, err)
				} else {
					out = append(out, namedFigure{"zdist-" + stem, fig})
				}
			}
			qq := &render.QQ{Measure: ref.Measure, Stratum: st.Name, Caution: curve.Caution}
			for k, s := range zs {
				if len(s.z) < 3 {
					continue
				}
				w := curve.WormOf(s.z)
				label := doc.Cohorts[k].Cohort
				if s.w != nil {
					label += ", unweighted"
				}
				qq.Series = append(qq.Series, render.QQSeries{Label: label, Expected: w.Normal, Observed: w.Z})
			}
			if len(qq.Series) > 0 {
				if fig, err := render.QQChart(qq); err != nil {
					skip("Q–Q plot", st.Name, err)
				} else {
					out = append(out, namedFigure{"qq-" + stem, fig})
				}
			}
			if job.Options.Bands != nil {
				bm := &render.BandMeans{Measure: ref.Measure, AgeUnit: ref.AgeUnit, Stratum: st.Name,
					Level: doc.Cohorts[0].Level, Caution: curve.Caution}
				for _, r := range doc.Cohorts {
					sr := render.BandSeries{Label: r.Cohort}
					for _, g := range r.Groups {
						if g.Kind == KindBand && g.Stratum == st.Name && !math.IsNaN(g.Mean.Value) {
							sr.AgeLo, sr.AgeHi = append(sr.AgeLo, g.AgeLo), append(sr.AgeHi, g.AgeHi)
							sr.Mean, sr.Lo, sr.Hi = append(sr.Mean, g.Mean.Value), append(sr.Lo, g.Mean.Lo), append(sr.Hi, g.Mean.Hi)
						}
					}
					if len(sr.Mean) > 0 {
						bm.Series = append(bm.Series, sr)
					}
				}
				if len(bm.Series) > 0 {
					if fig, err := render.BandMeansChart(bm); err != nil {
						skip("chart of mean z by age band", st.Name, err)
					} else {
						out = append(out, namedFigure{"means-" + stem, fig})
					}
				}
			}
		}
		if doc.AgainstRef != nil {
			figs, err := refFigures(job, doc.AgainstRef, &st)
			if err != nil {
				skip("chart of the two references", st.Name, err)
			}
			for k, f := range figs {
				out = append(out, namedFigure{[]string{"refs-", "refdiff-"}[k] + stem, f})
			}
		}
		if job.OwnCentiles && len(doc.Cohorts) > 0 {
			fig, err := ownCentileChart(ref, data[0], doc.Cohorts[0], st.Name, doc.Cohorts[0].Cohort)
			if err != nil {
				skip("own-centile chart", st.Name, err)
				continue
			}
			out = append(out, namedFigure{"own-" + stem, fig})
		}
	}
	return out, nil
}

// sampleZ is one stratum's z-scores of a cohort and their weights (nil
// without survey weights).
type sampleZ struct{ z, w []float64 }

func stratumZ(ref *curve.Reference, d *curve.Data, r *Result, stratum string) sampleZ {
	var s sampleZ
	for i, z := range r.Z {
		if math.IsNaN(z) || stratumOf(ref, d, i) != stratum {
			continue
		}
		s.z = append(s.z, z)
		if d.Weight != nil {
			s.w = append(s.w, d.Weight[i])
		}
	}
	return s
}

// refFigures draws, for one stratum of the reference, the second
// reference's centiles over the first's in the measurement's units, and
// the difference chart in the first's z units. A stratum the second
// reference lacks gives no figures.
func refFigures(job *Job, rd *RefDiff, st *curve.Stratum) ([]*render.Figure, error) {
	var figs []*render.Figure
	d := &render.Diff{Measure: job.Ref.Measure, AgeUnit: job.Ref.AgeUnit, Stratum: st.Name,
		A: job.RefName, B: job.AgainstName, Caution: curve.Caution}
	for _, c := range rd.Curves {
		if c.Stratum != st.Name {
			continue
		}
		dc := render.DiffCurve{Centile: 100 * c.Tau}
		for k, v := range c.Diff {
			if !math.IsNaN(v) {
				dc.Ages = append(dc.Ages, c.Ages[k])
				dc.Z = append(dc.Z, v)
			}
		}
		if len(dc.Ages) > 0 {
			d.Curves = append(d.Curves, dc)
		}
	}
	if len(d.Curves) == 0 {
		return nil, nil
	}
	sb := pairedStratum(job.Ref, job.Against, st)
	if sb != nil {
		lo, hi := max(st.AgeMin, sb.AgeMin), min(st.AgeMax, sb.AgeMax)
		c, _, err := refchart.Centiles(job.Ref, st, &refchart.Options{AgeLo: lo, AgeHi: hi})
		if err != nil {
			return nil, err
		}
		other, err := refchart.Curves(job.Against, sb, c.Curves[0].Ages, nil)
		if err != nil {
			return nil, err
		}
		c.Overlay = &render.Overlay{Label: job.AgainstName + ": its centiles " + centileList(other), Curves: other}
		fig, err := render.CentileChart(c, render.WithTitle(fmt.Sprintf("%s centiles of %s (bands) and %s (dashed) — %s",
			capitalFirst(measureOr(job.Ref.Measure)), job.RefName, job.AgainstName, st.Name)))
		if err != nil {
			return nil, err
		}
		figs = append(figs, fig)
	}
	fig, err := render.DiffChart(d)
	if err != nil {
		return figs, err
	}
	return append(figs, fig), nil
}

// pairedStratum is the stratum of b that CompareReferences pairs with a's
// stratum st, or nil.
func pairedStratum(a, b *curve.Reference, st *curve.Stratum) *curve.Stratum {
	if len(a.Strata) == 1 && len(b.Strata) == 1 {
		return &b.Strata[0]
	}
	sb, err := b.Stratum(st.Name)
	if err != nil {
		return nil
	}
	return sb
}

func centileList(c []render.Curve) string {
	var s []string
	for _, cv := range c {
		s = append(s, fmt.Sprint(cv.Centile))
	}
	return strings.Join(s, ", ")
}

func measureOr(m string) string {
	if m == "" {
		return "measurement"
	}
	return m
}

// capitalFirst upper-cases the first letter of a measure's name (never of
// a file name).
func capitalFirst(s string) string {
	if s == "" || s[0] < 'a' || s[0] > 'z' {
		return s
	}
	return string(s[0]-'a'+'A') + s[1:]
}

// stem makes a stratum name safe as part of a file name.
func stem(s string) string {
	if s == "" {
		return "all"
	}
	var b strings.Builder
	for _, r := range s {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '-', r == '_':
			b.WriteRune(r)
		default:
			b.WriteByte('_')
		}
	}
	return b.String()
}
