package main

import (
	"encoding/csv"
	"encoding/json"
	"errors"
	"io"
	"math"
	"strconv"
	"strings"

	"growband/curve"
	"growband/internal/intake"
)

const scoreUsage = `usage: growband score --ref FILE --in FILE.csv [column flags] [--format csv|json]
       growband score --ref FILE --age A --value V [--stratum S] [--format csv|json]

Gives the z-score (SDS) and centile of measurements against the reference.

With --in, every row of the CSV file is written back in file order with
three columns added: z, centile (percent) and flag. A row that cannot be
scored (missing or unreadable cells, an age outside the reference's fitted
range, an unknown stratum) has an empty z and centile and the reason in
flag; a scored row's flag lists remarks such as beyond-tail (outside the
outermost fitted centiles) or implausible (|z| > 5). By default the file has
an "age" column in the reference's age unit, a value column named after the
reference's measure, and, when the reference has several strata, a
"stratum" column; the column flags below change this.

With --age and --value, one measurement is scored; --stratum names its
stratum when the reference has several.
`

func runScore(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("score")
	refPath := fs.String("ref", "", "reference file written by build (required)")
	in := fs.String("in", "", "CSV file of measurements to score")
	ageFlag := fs.String("age", "", "age of a single measurement, in the reference's age unit")
	valueFlag := fs.String("value", "", "a single measurement, in the reference's unit")
	format := fs.String("format", "csv", "output format: csv or json")
	var cols columnFlags
	cols.register(fs, false)
	fs.StringVar(&cols.stratumName, "stratum", "", "stratum of the measurement(s); with --in, every row is taken to be in it")
	pos, err := parseFlags(fs, scoreUsage, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("score", "score: unexpected argument %q", pos[0])
	}
	if *format != "csv" && *format != "json" {
		return usagef("score", "score: --format must be csv or json, not %q", *format)
	}
	single := *ageFlag != "" || *valueFlag != ""
	switch {
	case single && *in != "":
		return usagef("score", "score: give --in, or --age with --value, not both")
	case single && (*ageFlag == "" || *valueFlag == ""):
		return usagef("score", "score: --age and --value go together")
	case !single && *in == "":
		return usagef("score", "score: give --in FILE.csv, or --age and --value")
	}
	var age, value float64
	if single {
		if age, err = strconv.ParseFloat(strings.TrimSpace(*ageFlag), 64); err != nil {
			return usagef("score", "score: --age: %q is not a number", *ageFlag)
		}
		if value, err = strconv.ParseFloat(strings.TrimSpace(*valueFlag), 64); err != nil {
			return usagef("score", "score: --value: %q is not a number", *valueFlag)
		}
	}
	ref, err := loadReference("score", *refPath)
	if err != nil {
		return err
	}
	if single {
		if cols.stratumName == "" && len(ref.Strata) > 1 {
			return usagef("score", "score: the reference has strata %s: name one with --stratum", strataNames(ref))
		}
		return scoreOne(stdout, ref, cols.stratumName, age, value, *format)
	}
	spec, err := cols.spec("score", ref, fs)
	if err != nil {
		return err
	}
	t, err := intake.ReadFile(*in, spec)
	if err != nil {
		return err
	}
	out := scoreTable(ref, t, cols.rowStratum)
	n := 0
	for _, o := range out {
		if o.ok {
			n++
		}
	}
	progress{w: stderr}.printf("%s: %d of %d rows scored; %d not scored (reason in the flag column)", t.Name, n, len(out), len(out)-n)
	if *format == "json" {
		return writeScoresJSON(stdout, ref, t.Header, out)
	}
	return writeScoresCSV(stdout, t.Header, out)
}

// scored is one input row with its score, or the reason it has none.
type scored struct {
	line   int
	fields []string
	z, c   float64
	flag   string
	ok     bool
}

// scoreTable scores every row of t in file order.
func scoreTable(r *curve.Reference, t *intake.Table, stratum func(string) string) []scored {
	var out []scored
	for _, rec := range t.All() {
		o := scored{line: rec.Line, fields: rec.Fields, z: math.NaN(), c: math.NaN()}
		switch {
		case rec.Excl != nil:
			o.flag = rec.Excl.Text()
		default:
			s, err := r.Score(stratum(rec.Row.Stratum), rec.Row.Age, rec.Row.Value)
			if err != nil {
				o.flag = scoreReason(r, err)
			} else {
				o.z, o.c, o.flag, o.ok = s.Z, s.Centile, s.Flags.String(), true
			}
		}
		out = append(out, o)
	}
	return out
}

// scoreReason is the short text of a scoring error for the flag column.
func scoreReason(r *curve.Reference, err error) string {
	switch {
	case errors.Is(err, curve.ErrAgeRange):
		return "age outside the reference's range"
	case errors.Is(err, curve.ErrUnknownStratum):
		return "unknown stratum (reference has " + strataNames(r) + ")"
	case errors.Is(err, curve.ErrValue):
		return "value is not a finite number"
	case errors.Is(err, curve.ErrDegenerate):
		return "centiles coincide at this age"
	}
	return err.Error()
}

// scoreOne scores a single measurement. A measurement that cannot be
// scored is still written, flagged, and the error returned.
func scoreOne(w io.Writer, r *curve.Reference, stratum string, age, value float64, format string) error {
	o := scored{line: 0, fields: []string{stratum, ageText(age), num(value)}, z: math.NaN(), c: math.NaN()}
	s, err := r.Score(stratum, age, value)
	if err != nil {
		o.flag = scoreReason(r, err)
	} else {
		o.z, o.c, o.flag, o.ok = s.Z, s.Centile, s.Flags.String(), true
	}
	head := []string{"stratum", "age", "value"}
	var werr error
	if format == "json" {
		werr = writeScoresJSON(w, r, head, []scored{o})
	} else {
		werr = writeScoresCSV(w, head, []scored{o})
	}
	if err != nil {
		return err
	}
	return werr
}

// writeScoresCSV echoes the rows with z, centile and flag columns added.
func writeScoresCSV(w io.Writer, header []string, rows []scored) error {
	cw := csv.NewWriter(w)
	cw.Write(append(append([]string(nil), header...), "z", "centile", "flag"))
	for _, o := range rows {
		cw.Write(append(append([]string(nil), o.fields...), zText(o.z), centileText(o.c), o.flag))
	}
	cw.Flush()
	return cw.Error()
}

// writeScoresJSON writes the rows as one JSON document; z and centile are
// null for rows not scored.
func writeScoresJSON(w io.Writer, r *curve.Reference, header []string, rows []scored) error {
	type row struct {
		Line    int         `json:"line,omitempty"`
		Fields  []string    `json:"fields"`
		Z       *jsonNumber `json:"z"`
		Centile *jsonNumber `json:"centile"`
		Flag    string      `json:"flag"`
	}
	doc := struct {
		Measure string   `json:"measure"`
		Unit    string   `json:"unit"`
		AgeUnit string   `json:"age_unit"`
		Header  []string `json:"header"`
		Rows    []row    `json:"rows"`
		Caution string   `json:"caution"`
	}{r.Measure, r.Unit, r.AgeUnit, header, nil, curve.Caution}
	for _, o := range rows {
		x := row{Line: o.line, Fields: o.fields, Flag: o.flag}
		if x.Fields == nil {
			x.Fields = []string{}
		}
		if o.ok {
			z, c := jsonNumber(round(o.z, 3)), jsonNumber(round(o.c, 4))
			x.Z, x.Centile = &z, &c
		}
		doc.Rows = append(doc.Rows, x)
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(doc)
}

func round(x float64, digits int) float64 {
	p := math.Pow(10, float64(digits))
	return math.Round(x*p) / p
}
