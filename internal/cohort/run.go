package cohort

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"flag"
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

const compareUsage = `usage: growband compare --ref FILE --in COHORT.csv [--vs OTHER.csv]
                       [--bands 0:60:6] [--format csv|json] [--out DIR]
                       [--against-ref B] [column flags]

Scores every measurement of COHORT.csv against the reference (a reference
file or an LMS table, *.csv) and summarises the z-scores per stratum and age
band, per stratum and overall: n, mean z with its interval, SD of z, and the
shares below -2 and -3 and above +2 SD with Wilson intervals, beside the
shares the reference implies (2.275%, 0.135%, 2.275%).

With --subject-column, a child's repeated visits are not independent: the
intervals are cluster-robust (sandwich variance over subjects) and the
Wilson intervals use the Kish effective n = n/deff. With --weight-column the
estimates are weighted. The output says which was done.

--vs adds a second cohort and the differences (cohort minus --vs) in mean z
and in the shares with their intervals. --against-ref B places reference B's
centiles in the reference's z units.

Without --out the summary table goes to stdout. With --out DIR, the files
are written there: compare.csv (or compare.json: everything), unscored.csv
(rows not used and why), differences.csv (--vs), refdiff.csv and
refdiff-STRATUM.svg (--against-ref), zdist.svg (the cohort's z against
N(0,1)), zdist-vs.svg (--vs) and, with --own-centiles, own-STRATUM.svg (the
cohort's own 3rd, 50th and 97th centiles fitted by quantile regression,
dashed, over the reference's centile bands).

Flags:
`

// RunCompare runs "growband compare" with args (without the command name),
// writing results to stdout and messages ("growband: ...") to stderr.
// A bad command line returns a *UsageError (exit status 2); "-h" writes the
// usage to stdout and returns flag.ErrHelp (success); any other error is a
// failure (status 1). readFlags registers the reading options every command
// shares (age, date, value and stratum columns, unit, delimiter, decimal,
// missing markers, date format, stratum codes, sheet) and returns the
// function that applies them to the reading spec.
func RunCompare(args []string, stdout, stderr io.Writer, readFlags func(*flag.FlagSet) func(*intake.Spec) error) error {
	fs := flag.NewFlagSet("compare", flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	refPath := fs.String("ref", "", "reference file, or LMS table *.csv (required)")
	in := fs.String("in", "", "CSV file of the cohort's measurements (required)")
	vs := fs.String("vs", "", "CSV file of a second cohort to compare with")
	against := fs.String("against-ref", "", "second reference whose centiles are placed in the reference's z units")
	bandSpec := fs.String("bands", "", "age bands FROM:TO:STEP (e.g. 0:60:6) or edges 0,6,12,24 (default: none)")
	format := fs.String("format", "csv", "table format: csv or json")
	out := fs.String("out", "", "directory to write the tables and charts into (default: summary to stdout)")
	level := fs.Float64("level", DefaultLevel, "coverage of the intervals, in (0,1)")
	limit := fs.Float64("limit", curve.ImplausibleZ, "leave out rows with |z| above this as implausible (negative keeps all)")
	ownFit := fs.Bool("own-centiles", false, "with --out, also fit the cohort's own 3rd, 50th and 97th centiles and draw them over the reference (own-STRATUM.svg)")
	name := fs.String("name", "", "label of the cohort (default: the file name)")
	vsName := fs.String("vs-name", "", "label of the --vs cohort (default: its file name)")
	var col intake.Spec
	fs.StringVar(&col.Subject, "subject-column", "", "column holding the subject id: intervals become cluster-robust")
	fs.StringVar(&col.Weight, "weight-column", "", "column holding survey weights (positive)")
	applyRead := readFlags(fs)

	usage := func(format string, a ...any) error {
		return &UsageError{Msg: "compare: " + fmt.Sprintf(format, a...)}
	}
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			fmt.Fprint(stdout, compareUsage)
			fs.SetOutput(stdout)
			fs.PrintDefaults()
			return flag.ErrHelp
		}
		return usage("%v", err)
	}
	if fs.NArg() > 0 {
		return usage("unexpected argument %q", fs.Arg(0))
	}
	if *refPath == "" {
		return usage("--ref FILE is required")
	}
	if *in == "" {
		return usage("--in COHORT.csv is required")
	}
	if *format != "csv" && *format != "json" {
		return usage("--format %q: want csv or json", *format)
	}
	opt := &Options{Level: *level, Name: *name, VsName: *vsName, Limit: *limit}
	if *bandSpec != "" {
		b, err := parseBands(*bandSpec)
		if err != nil {
			return usage("--bands: %v", err)
		}
		opt.Bands = b
	}
	if _, err := resolve(opt); err != nil {
		return usage("%v", err)
	}
	if opt.Name == "" {
		opt.Name = filepath.Base(*in)
	}
	if opt.VsName == "" && *vs != "" {
		opt.VsName = filepath.Base(*vs)
	}

	ref, err := curve.LoadFile(*refPath)
	if err != nil {
		return err
	}
	// The rules every command reads a file to score by, with the columns
	// and unit the flags name.
	spec := scorefile.Spec(ref)
	if err := applyRead(spec); err != nil {
		return usage("%v", err)
	}
	spec.Subject, spec.Weight = col.Subject, col.Weight

	ta, da, err := readCohort(*in, ref, spec, stderr)
	if err != nil {
		return err
	}
	doc := struct {
		Cohorts     []*Result      `json:"cohorts"`
		Method      string         `json:"differences_method,omitempty"`
		Differences []Diff         `json:"differences,omitempty"`
		AgainstRef  *RefDiff       `json:"against_ref,omitempty"`
		Unscored    []unscoredLine `json:"unscored"`
	}{}
	var tb *intake.Table
	if *vs == "" {
		r, err := Compare(ref, da, opt)
		if err != nil {
			return fmt.Errorf("%s: %w", *in, err)
		}
		doc.Cohorts = []*Result{r}
	} else {
		var db *curve.Data
		if tb, db, err = readCohort(*vs, ref, spec, stderr); err != nil {
			return err
		}
		two, err := CompareTwo(ref, da, db, opt)
		if err != nil {
			return err
		}
		doc.Cohorts = []*Result{two.A, two.B}
		doc.Method, doc.Differences = two.Method, two.Diffs
	}
	doc.Unscored = unscoredLines(ta, doc.Cohorts[0])
	if tb != nil {
		doc.Unscored = append(doc.Unscored, unscoredLines(tb, doc.Cohorts[1])...)
	}
	for _, r := range doc.Cohorts {
		fmt.Fprintf(stderr, "growband: %s: %d of %d rows scored; %s\n", r.Cohort, r.Scored, r.Rows, r.Method)
	}
	if *against != "" {
		b, err := curve.LoadFile(*against)
		if err != nil {
			return err
		}
		if doc.AgainstRef, err = CompareReferences(ref, b, nil, nil); err != nil {
			return fmt.Errorf("--against-ref %s: %w", *against, err)
		}
		for _, n := range doc.AgainstRef.Notes {
			fmt.Fprintf(stderr, "growband: --against-ref: %s\n", n)
		}
	}

	if *out == "" {
		if *format == "json" {
			return writeJSON(stdout, doc)
		}
		return writeSummary(stdout, doc.Cohorts)
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return err
	}
	var written []string
	put := func(file string, f func(io.Writer) error) error {
		p := filepath.Join(*out, file)
		if err := writeFile(p, f); err != nil {
			return err
		}
		written = append(written, p)
		return nil
	}
	if *format == "json" {
		if err := put("compare.json", func(w io.Writer) error { return writeJSON(w, doc) }); err != nil {
			return err
		}
	} else {
		if err := put("compare.csv", func(w io.Writer) error { return writeSummary(w, doc.Cohorts) }); err != nil {
			return err
		}
		if len(doc.Cohorts) == 2 {
			two := &TwoResult{A: doc.Cohorts[0], B: doc.Cohorts[1], Method: doc.Method, Diffs: doc.Differences}
			if err := put("differences.csv", func(w io.Writer) error { return writeDiffs(w, two) }); err != nil {
				return err
			}
		}
		if doc.AgainstRef != nil {
			if err := put("refdiff.csv", func(w io.Writer) error { return writeRefDiff(w, doc.AgainstRef) }); err != nil {
				return err
			}
		}
	}
	if err := put("unscored.csv", func(w io.Writer) error { return writeUnscored(w, doc.Unscored) }); err != nil {
		return err
	}
	for k, r := range doc.Cohorts {
		file := "zdist.svg"
		if k == 1 {
			file = "zdist-vs.svg"
		}
		fig, err := render.ZDistChart(&render.ZDist{Measure: ref.Measure, Cohort: r.Cohort, Z: finite(r.Z), Caution: curve.Caution})
		if err != nil {
			fmt.Fprintf(stderr, "growband: %s: no z-score chart: %v\n", r.Cohort, err)
			continue
		}
		if err := saveChart(filepath.Join(*out, file), fig); err != nil {
			return err
		}
		written = append(written, filepath.Join(*out, file))
	}
	if doc.AgainstRef != nil {
		for _, st := range strataOf(doc.AgainstRef) {
			d := &render.Diff{Measure: ref.Measure, AgeUnit: ref.AgeUnit, Stratum: st,
				A: filepath.Base(*refPath), B: filepath.Base(*against), Caution: curve.Caution}
			for _, c := range doc.AgainstRef.Curves {
				if c.Stratum != st {
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
			fig, err := render.DiffChart(d)
			if err != nil {
				fmt.Fprintf(stderr, "growband: stratum %q: no difference chart: %v\n", st, err)
				continue
			}
			p := filepath.Join(*out, "refdiff-"+stem(st)+".svg")
			if err := saveChart(p, fig); err != nil {
				return err
			}
			written = append(written, p)
		}
	}
	if *ownFit {
		for _, st := range ref.Strata {
			fig, err := ownCentileChart(ref, da, doc.Cohorts[0], st.Name, doc.Cohorts[0].Cohort)
			if err != nil {
				fmt.Fprintf(stderr, "growband: stratum %q: no own-centile chart: %v\n", st.Name, err)
				continue
			}
			p := filepath.Join(*out, "own-"+stem(st.Name)+".svg")
			if err := saveChart(p, fig); err != nil {
				return err
			}
			written = append(written, p)
		}
	}
	for _, p := range written {
		fmt.Fprintf(stderr, "growband: wrote %s\n", p)
	}
	return nil
}

// readCohort reads a cohort file by spec and reports the rows it could not
// read; a file without a stratum column is refused against a reference with
// several strata.
func readCohort(path string, ref *curve.Reference, spec *intake.Spec, stderr io.Writer) (*intake.Table, *curve.Data, error) {
	t, err := intake.ReadFile(path, spec)
	if err != nil {
		return nil, nil, err
	}
	if err := scorefile.NeedStratum(ref, t); err != nil {
		return nil, nil, err
	}
	if len(t.Excluded) > 0 {
		fmt.Fprintf(stderr, "growband: %s: %d of %d rows not read; they are listed in unscored.csv with --out\n", t.Name, len(t.Excluded), t.Total)
	}
	age, value, weight, stratum, subject := t.Columns()
	return t, &curve.Data{Age: age, Value: value, Weight: weight, Stratum: stratum, Subject: subject}, nil
}

// unscoredLine is a row of a cohort file that was not used.
type unscoredLine struct {
	File   string `json:"file"`
	Line   int    `json:"line"`
	Reason string `json:"reason"`
}

// unscoredLines lists the rows the reader excluded and those Compare could
// not score, in file order of each kind.
func unscoredLines(t *intake.Table, r *Result) []unscoredLine {
	var out []unscoredLine
	for i := range t.Excluded {
		out = append(out, unscoredLine{t.Name, t.Excluded[i].Line, t.Excluded[i].Text()})
	}
	for _, u := range r.Unscored {
		out = append(out, unscoredLine{t.Name, t.Rows[u.Row].Line, u.Reason})
	}
	return out
}

// parseBands reads FROM:TO:STEP or a comma-separated list of edges.
func parseBands(s string) ([]float64, error) {
	if parts := strings.Split(s, ":"); len(parts) == 3 {
		var v [3]float64
		for k, p := range parts {
			x, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
			if err != nil || math.IsInf(x, 0) {
				return nil, fmt.Errorf("%q is not a number", p)
			}
			v[k] = x
		}
		from, to, step := v[0], v[1], v[2]
		if !(step > 0) || !(to > from) {
			return nil, fmt.Errorf("want FROM:TO:STEP with FROM < TO and STEP > 0, got %q", s)
		}
		n := math.Round((to - from) / step)
		if n > 10000 {
			return nil, fmt.Errorf("%q makes more than 10000 bands", s)
		}
		var edges []float64
		for k := 0; float64(k) <= n; k++ {
			edges = append(edges, from+float64(k)*step)
		}
		if last := edges[len(edges)-1]; to-last > step*1e-9 {
			edges = append(edges, to) // a shorter last band
		} else {
			edges[len(edges)-1] = to
		}
		return edges, nil
	}
	var edges []float64
	for _, p := range strings.Split(s, ",") {
		x, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil {
			return nil, fmt.Errorf("%q is not a number", p)
		}
		edges = append(edges, x)
	}
	return edges, nil
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

func saveChart(path string, fig *render.Figure) error {
	return render.Save(path, fig, "", 0, 0)
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

func num(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "NA"
	}
	return strconv.FormatFloat(x, 'g', 6, 64)
}

var summaryHeader = []string{
	"cohort", "kind", "stratum", "age_lo", "age_hi", "n", "subjects", "sum_weight",
	"mean_z", "mean_z_lo", "mean_z_hi", "sd_z",
	"below_minus2", "below_minus2_lo", "below_minus2_hi", "below_minus2_expected",
	"below_minus3", "below_minus3_lo", "below_minus3_hi", "below_minus3_expected",
	"above_plus2", "above_plus2_lo", "above_plus2_hi", "above_plus2_expected",
	"deff_below_minus2", "method",
}

func writeSummary(w io.Writer, rs []*Result) error {
	cw := csv.NewWriter(w)
	cw.Write(summaryHeader)
	for _, r := range rs {
		for _, g := range r.Groups {
			row := []string{r.Cohort, g.Kind, g.Stratum, num(g.AgeLo), num(g.AgeHi),
				strconv.Itoa(g.N), strconv.Itoa(g.Subjects), num(g.SumW),
				num(g.Mean.Value), num(g.Mean.Lo), num(g.Mean.Hi), num(g.SD)}
			for _, s := range []Share{g.Below2, g.Below3, g.Above2} {
				row = append(row, num(s.Value), num(s.Lo), num(s.Hi), num(s.Expected))
			}
			row = append(row, num(g.Below2.DEff), r.Method)
			cw.Write(row)
		}
	}
	cw.Flush()
	return cw.Error()
}

func writeDiffs(w io.Writer, t *TwoResult) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"cohort", "vs", "kind", "stratum", "age_lo", "age_hi", "n", "n_vs",
		"diff_mean_z", "diff_mean_z_lo", "diff_mean_z_hi",
		"diff_below_minus2", "diff_below_minus2_lo", "diff_below_minus2_hi",
		"diff_below_minus3", "diff_below_minus3_lo", "diff_below_minus3_hi",
		"diff_above_plus2", "diff_above_plus2_lo", "diff_above_plus2_hi", "method"})
	for _, d := range t.Diffs {
		row := []string{t.A.Cohort, t.B.Cohort, d.Kind, d.Stratum, num(d.AgeLo), num(d.AgeHi), strconv.Itoa(d.NA), strconv.Itoa(d.NB)}
		for _, e := range []Estimate{d.Mean, d.Below2, d.Below3, d.Above2} {
			row = append(row, num(e.Value), num(e.Lo), num(e.Hi))
		}
		cw.Write(append(row, t.Method))
	}
	cw.Flush()
	return cw.Error()
}

func writeRefDiff(w io.Writer, d *RefDiff) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"stratum", "centile", "age", "value", "z", "diff_z"})
	for _, c := range d.Curves {
		for k := range c.Ages {
			cw.Write([]string{c.Stratum, num(100 * c.Tau), num(c.Ages[k]), num(c.Value[k]), num(c.Z[k]), num(c.Diff[k])})
		}
	}
	cw.Flush()
	return cw.Error()
}

func writeUnscored(w io.Writer, rows []unscoredLine) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"file", "line", "reason"})
	for _, u := range rows {
		cw.Write([]string{u.File, strconv.Itoa(u.Line), u.Reason})
	}
	cw.Flush()
	return cw.Error()
}

func finite(z []float64) []float64 {
	var out []float64
	for _, v := range z {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			out = append(out, v)
		}
	}
	return out
}

func strataOf(d *RefDiff) []string {
	var out []string
	seen := map[string]bool{}
	for _, c := range d.Curves {
		if !seen[c.Stratum] {
			seen[c.Stratum] = true
			out = append(out, c.Stratum)
		}
	}
	return out
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
