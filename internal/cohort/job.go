package cohort

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"

	"growband/curve"
	"growband/internal/intake"
	"growband/internal/scorefile"
	"growband/render"
)

// Cohort is one cohort file as read for the comparison: its rows (with
// their line numbers) and the rows the reader could not use.
type Cohort struct {
	Name  string // label in the outputs, for example the file name
	Table *intake.Table
}

// Job is one comparison as "growband compare" runs it, in Go values: the
// command parses its flags and reads the files, Run does the rest.
type Job struct {
	Ref     *curve.Reference
	RefName string // how the outputs name the reference, e.g. its file name
	// Cohorts holds none (only Against), one, or two cohorts (the second is
	// compared with the first).
	Cohorts []Cohort
	// Against, when not nil, is a second reference whose centiles are
	// placed in Ref's z units and drawn over Ref's chart.
	Against     *curve.Reference
	AgainstName string
	Options     Options // Name and VsName are taken from Cohorts
	JSON        bool    // tables as JSON instead of CSV
	// OutDir, when not empty, receives the tables and charts; otherwise the
	// table goes to stdout.
	OutDir string
	// Rows, when not nil, receives every scored row with its z-score and
	// centile, as CSV.
	Rows io.Writer
	// OwnCentiles fits the first cohort's own 3rd, 50th and 97th centiles
	// and draws them over the reference (with OutDir).
	OwnCentiles bool
	// ChartFormat is the charts' format, "svg" (when empty), "png" or
	// "pdf".
	ChartFormat string
}

// Document is everything a comparison found, as compare.json holds it.
type Document struct {
	Reference   RefInfo        `json:"reference"`
	Caution     string         `json:"caution"`
	Cohorts     []*Result      `json:"cohorts"`
	Method      string         `json:"differences_method,omitempty"`
	Differences []Diff         `json:"differences,omitempty"`
	AgainstRef  *RefDiff       `json:"against_ref,omitempty"`
	Against     *RefInfo       `json:"against,omitempty"`
	Unscored    []UnscoredLine `json:"unscored"`
	// Faltering and Centiles are the growth results (see addGrowth).
	Faltering []Faltering `json:"growth_faltering,omitempty"`
	Centiles  []Shift     `json:"centile_differences,omitempty"`
}

// RefInfo names a reference in the outputs.
type RefInfo struct {
	Name    string `json:"name"`
	Measure string `json:"measure"`
	Unit    string `json:"unit"`
	AgeUnit string `json:"age_unit"`
}

func refInfo(r *curve.Reference, name string) RefInfo {
	return RefInfo{Name: name, Measure: r.Measure, Unit: r.Unit, AgeUnit: r.AgeUnit}
}

// UnscoredLine is a row of a cohort file that was not used.
type UnscoredLine struct {
	File   string `json:"file"`
	Line   int    `json:"line"`
	Reason string `json:"reason"`
}

// Run carries out the job: it compares the cohorts (and the references),
// writes the summary to stdout or the tables and charts to job.OutDir, and
// reports progress on stderr as "growband: ...". Errors are those of
// Compare, CompareTwo and CompareReferences, and of writing files.
func Run(job *Job, stdout, stderr io.Writer) error {
	if len(job.Cohorts) == 0 && job.Against == nil {
		return fmt.Errorf("%w: neither a cohort nor a second reference to compare", ErrOptions)
	}
	if len(job.Cohorts) > 2 {
		return fmt.Errorf("%w: %d cohorts, at most 2", ErrOptions, len(job.Cohorts))
	}
	ref := job.Ref
	doc := &Document{Reference: refInfo(ref, job.RefName), Caution: curve.Caution}
	opt := job.Options
	data := make([]*curve.Data, len(job.Cohorts))
	for k, c := range job.Cohorts {
		age, value, weight, stratum, subject := c.Table.Columns()
		data[k] = &curve.Data{Age: age, Value: value, Weight: weight, Stratum: stratum, Subject: subject}
	}
	switch len(job.Cohorts) {
	case 1:
		opt.Name = job.Cohorts[0].Name
		r, err := Compare(ref, data[0], &opt)
		if err != nil {
			return fmt.Errorf("%s: %w", job.Cohorts[0].Name, err)
		}
		doc.Cohorts = []*Result{r}
	case 2:
		opt.Name, opt.VsName = job.Cohorts[0].Name, job.Cohorts[1].Name
		two, err := CompareTwo(ref, data[0], data[1], &opt)
		if err != nil {
			return err
		}
		doc.Cohorts = []*Result{two.A, two.B}
		doc.Method, doc.Differences = two.Method, two.Diffs
	}
	for k, r := range doc.Cohorts {
		t := job.Cohorts[k].Table
		doc.Unscored = append(doc.Unscored, unscoredLines(t, r)...)
		// Count the rows of the file: those the reader left out come first.
		r.Rows = t.Total
		var counts []ReasonCount
		for _, rc := range t.Counts() {
			counts = append(counts, ReasonCount{Reason: rc.Reason.String(), N: rc.N})
		}
		r.NotScored = append(counts, r.NotScored...)
		fmt.Fprintf(stderr, "growband: %s: %d of %d rows scored; %s\n", r.Cohort, r.Scored, r.Rows, r.Method)
	}
	if err := addGrowth(ref, data, doc, opt.Level); err != nil {
		return err
	}
	if job.Against != nil {
		var err error
		if doc.AgainstRef, err = CompareReferences(ref, job.Against, nil, nil); err != nil {
			return fmt.Errorf("%s: %w", job.AgainstName, err)
		}
		a := refInfo(job.Against, job.AgainstName)
		doc.Against = &a
		for _, n := range doc.AgainstRef.Notes {
			fmt.Fprintf(stderr, "growband: %s: %s\n", job.AgainstName, n)
		}
	}
	if job.Rows != nil {
		if err := writeRows(job.Rows, ref, job.Cohorts, data, doc.Cohorts); err != nil {
			return err
		}
	}
	if job.OutDir == "" {
		switch {
		case job.JSON:
			return writeJSON(stdout, doc)
		case len(doc.Cohorts) > 0:
			if err := writeSummary(stdout, doc); err != nil {
				return err
			}
			return writeGrowthText(stdout, doc)
		default:
			return writeRefDiff(stdout, doc)
		}
	}
	return writeOut(job, doc, data, stderr)
}

// writeOut writes the tables and charts into job.OutDir.
func writeOut(job *Job, doc *Document, data []*curve.Data, stderr io.Writer) error {
	if err := os.MkdirAll(job.OutDir, 0o755); err != nil {
		return err
	}
	var written []string
	put := func(file string, f func(io.Writer) error) error {
		p := filepath.Join(job.OutDir, file)
		if err := writeFile(p, f); err != nil {
			return err
		}
		written = append(written, p)
		return nil
	}
	if job.JSON {
		if err := put("compare.json", func(w io.Writer) error { return writeJSON(w, doc) }); err != nil {
			return err
		}
	} else {
		if len(doc.Cohorts) > 0 {
			if err := put("compare.csv", func(w io.Writer) error { return writeSummary(w, doc) }); err != nil {
				return err
			}
		}
		if len(doc.Cohorts) == 2 {
			if err := put("differences.csv", func(w io.Writer) error { return writeDiffs(w, doc) }); err != nil {
				return err
			}
		}
		if doc.AgainstRef != nil {
			if err := put("refdiff.csv", func(w io.Writer) error { return writeRefDiff(w, doc) }); err != nil {
				return err
			}
		}
	}
	if len(doc.Cohorts) > 0 {
		if err := put("unscored.csv", func(w io.Writer) error { return writeUnscored(w, doc.Unscored) }); err != nil {
			return err
		}
	}
	figs, err := charts(job, doc, data, stderr)
	if err != nil {
		return err
	}
	tables, more, err := growthFiles(job.Ref, doc)
	if err != nil {
		return err
	}
	for _, name := range []string{"growth.csv", "centile-diff.csv"} {
		if f := tables[name]; f != nil {
			if err := put(name, f); err != nil {
				return err
			}
		}
	}
	figs = append(figs, more...)
	format := job.ChartFormat
	if format == "" {
		format = "svg"
	}
	for _, f := range figs {
		p := filepath.Join(job.OutDir, f.file+"."+format)
		if err := render.Save(p, f.fig, format, 0, 0); err != nil {
			return err
		}
		written = append(written, p)
	}
	for _, p := range written {
		fmt.Fprintf(stderr, "growband: wrote %s\n", p)
	}
	return nil
}

// unscoredLines lists the rows the reader excluded and those Compare could
// not score, in file order of each kind.
func unscoredLines(t *intake.Table, r *Result) []UnscoredLine {
	var out []UnscoredLine
	for i := range t.Excluded {
		out = append(out, UnscoredLine{t.Name, t.Excluded[i].Line, t.Excluded[i].Text()})
	}
	for _, u := range r.Unscored {
		out = append(out, UnscoredLine{t.Name, t.Rows[u.Row].Line, u.Reason})
	}
	return out
}

func writeFile(path string, f func(io.Writer) error) error {
	fh, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := f(fh); err != nil {
		fh.Close()
		return err
	}
	return fh.Close()
}

func num(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "NA"
	}
	return strconv.FormatFloat(x, 'g', 6, 64)
}

// shareNames are the column stems of the three shares.
var shareNames = []string{"below_minus2", "below_minus3", "above_plus2"}

func summaryHeader() []string {
	h := []string{"reference", "cohort", "kind", "stratum", "age_lo", "age_hi", "n", "subjects", "sum_weight",
		"mean_z", "mean_z_se", "mean_z_lo", "mean_z_hi", "sd_z"}
	for _, s := range shareNames {
		h = append(h, s, s+"_se", s+"_lo", s+"_hi", s+"_expected", s+"_deff", s+"_n_eff")
	}
	return append(h, "rows", "scored", "not_scored", "method", "caution")
}

// notScoredText lists counts as "not a number 1; age outside the
// reference's range 3".
func notScoredText(c []ReasonCount) string {
	var s []string
	for _, rc := range c {
		s = append(s, fmt.Sprintf("%s %d", rc.Reason, rc.N))
	}
	return strings.Join(s, "; ")
}

func writeSummary(w io.Writer, doc *Document) error {
	cw := csv.NewWriter(w)
	cw.Write(summaryHeader())
	for _, r := range doc.Cohorts {
		for _, g := range r.Groups {
			row := []string{doc.Reference.Name, r.Cohort, g.Kind, g.Stratum, num(g.AgeLo), num(g.AgeHi),
				strconv.Itoa(g.N), strconv.Itoa(g.Subjects), num(g.SumW),
				num(g.Mean.Value), num(g.Mean.SE), num(g.Mean.Lo), num(g.Mean.Hi), num(g.SD)}
			for _, s := range []Share{g.Below2, g.Below3, g.Above2} {
				row = append(row, num(s.Value), num(s.SE), num(s.Lo), num(s.Hi), num(s.Expected), num(s.DEff), num(s.NEff))
			}
			row = append(row, strconv.Itoa(r.Rows), strconv.Itoa(r.Scored), notScoredText(r.NotScored), r.Method, doc.Caution)
			cw.Write(row)
		}
	}
	cw.Flush()
	return cw.Error()
}

func writeDiffs(w io.Writer, doc *Document) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"reference", "cohort", "vs", "kind", "stratum", "age_lo", "age_hi", "n", "n_vs",
		"diff_mean_z", "diff_mean_z_se", "diff_mean_z_lo", "diff_mean_z_hi",
		"diff_below_minus2", "diff_below_minus2_se", "diff_below_minus2_lo", "diff_below_minus2_hi",
		"diff_below_minus3", "diff_below_minus3_se", "diff_below_minus3_lo", "diff_below_minus3_hi",
		"diff_above_plus2", "diff_above_plus2_se", "diff_above_plus2_lo", "diff_above_plus2_hi", "method", "caution"})
	a, b := doc.Cohorts[0], doc.Cohorts[1]
	for _, d := range doc.Differences {
		row := []string{doc.Reference.Name, a.Cohort, b.Cohort, d.Kind, d.Stratum, num(d.AgeLo), num(d.AgeHi), strconv.Itoa(d.NA), strconv.Itoa(d.NB)}
		for _, e := range []Estimate{d.Mean, d.Below2, d.Below3, d.Above2} {
			row = append(row, num(e.Value), num(e.SE), num(e.Lo), num(e.Hi))
		}
		cw.Write(append(row, doc.Method, doc.Caution))
	}
	cw.Flush()
	return cw.Error()
}

func writeRefDiff(w io.Writer, doc *Document) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"reference", "against", "stratum", "centile", "age", "value", "z", "diff_z", "caution"})
	for _, c := range doc.AgainstRef.Curves {
		for k := range c.Ages {
			cw.Write([]string{doc.Reference.Name, doc.Against.Name, c.Stratum, num(100 * c.Tau), num(c.Ages[k]), num(c.Value[k]), num(c.Z[k]), num(c.Diff[k]), doc.Caution})
		}
	}
	cw.Flush()
	return cw.Error()
}

func writeUnscored(w io.Writer, rows []UnscoredLine) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"file", "line", "reason"})
	for _, u := range rows {
		cw.Write([]string{u.File, strconv.Itoa(u.Line), u.Reason})
	}
	cw.Flush()
	return cw.Error()
}

// writeRows writes every scored row of the cohorts with its z-score and
// centile: file, line, stratum, age, value, weight, subject, z, centile.
func writeRows(w io.Writer, ref *curve.Reference, cohorts []Cohort, data []*curve.Data, res []*Result) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"cohort", "file", "line", "stratum", "age", "value", "weight", "subject", "z", "centile"})
	for k, r := range res {
		d, t := data[k], cohorts[k].Table
		for i, z := range r.Z {
			if math.IsNaN(z) {
				continue
			}
			weight, subject := "", ""
			if d.Weight != nil {
				weight = strconv.FormatFloat(d.Weight[i], 'g', -1, 64)
			}
			if d.Subject != nil {
				subject = d.Subject[i]
			}
			cw.Write([]string{r.Cohort, t.Name, strconv.Itoa(t.Rows[i].Line), stratumOf(ref, d, i),
				strconv.FormatFloat(d.Age[i], 'g', -1, 64), strconv.FormatFloat(d.Value[i], 'g', -1, 64),
				weight, subject, strconv.FormatFloat(z, 'g', 10, 64), scorefile.CentileText(100 * normP(z))})
		}
	}
	cw.Flush()
	return cw.Error()
}

// writeJSON writes v as indented JSON with NaN and infinite numbers as
// null (encoding/json refuses them; an interval of a single subject is NaN).
func writeJSON(w io.Writer, v any) error {
	var raw, out bytes.Buffer
	if err := encodeJSON(&raw, reflect.ValueOf(v)); err != nil {
		return err
	}
	if err := json.Indent(&out, raw.Bytes(), "", "  "); err != nil {
		return err
	}
	out.WriteByte('\n')
	_, err := w.Write(out.Bytes())
	return err
}

// encodeJSON writes v like encoding/json for the types of this package
// (structs with json tags, embedded structs, slices, pointers, strings,
// numbers, booleans), but writes NaN and infinities as null.
func encodeJSON(b *bytes.Buffer, v reflect.Value) error {
	switch v.Kind() {
	case reflect.Pointer, reflect.Interface:
		if v.IsNil() {
			b.WriteString("null")
			return nil
		}
		return encodeJSON(b, v.Elem())
	case reflect.Struct:
		b.WriteByte('{')
		first := true
		var fields func(v reflect.Value) error
		fields = func(v reflect.Value) error {
			t := v.Type()
			for i := range t.NumField() {
				f := t.Field(i)
				if !f.IsExported() {
					continue
				}
				tag := f.Tag.Get("json")
				name, opts, _ := strings.Cut(tag, ",")
				if name == "-" {
					continue
				}
				fv := v.Field(i)
				if f.Anonymous && name == "" && fv.Kind() == reflect.Struct {
					if err := fields(fv); err != nil {
						return err
					}
					continue
				}
				if strings.Contains(opts, "omitempty") && fv.IsZero() {
					continue
				}
				if (fv.Kind() == reflect.Slice) && strings.Contains(opts, "omitempty") && fv.Len() == 0 {
					continue
				}
				if name == "" {
					name = f.Name
				}
				if !first {
					b.WriteByte(',')
				}
				first = false
				k, _ := json.Marshal(name)
				b.Write(k)
				b.WriteByte(':')
				if err := encodeJSON(b, fv); err != nil {
					return err
				}
			}
			return nil
		}
		if err := fields(v); err != nil {
			return err
		}
		b.WriteByte('}')
	case reflect.Slice, reflect.Array:
		if v.Kind() == reflect.Slice && v.IsNil() {
			b.WriteString("[]")
			return nil
		}
		b.WriteByte('[')
		for i := range v.Len() {
			if i > 0 {
				b.WriteByte(',')
			}
			if err := encodeJSON(b, v.Index(i)); err != nil {
				return err
			}
		}
		b.WriteByte(']')
	case reflect.Float32, reflect.Float64:
		x := v.Float()
		if math.IsNaN(x) || math.IsInf(x, 0) {
			b.WriteString("null")
		} else {
			b.WriteString(strconv.FormatFloat(x, 'g', -1, 64))
		}
	default:
		e, err := json.Marshal(v.Interface())
		if err != nil {
			return err
		}
		b.Write(e)
	}
	return nil
}
