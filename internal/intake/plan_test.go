package intake

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
)

const minimalPlan = `
[input]
file = "survey.csv"
age = "age_months"
value = "weight_kg"
`

func parse(t *testing.T, text string) *Plan {
	t.Helper()
	p, err := ParsePlan([]byte(text), "plan.toml", "/data")
	if err != nil {
		t.Fatalf("ParsePlan: %v", err)
	}
	return p
}

func TestPlanDefaults(t *testing.T) {
	p := parse(t, minimalPlan)
	if p.Input.File != filepath.Join("/data", "survey.csv") {
		t.Errorf("file %q", p.Input.File)
	}
	if p.Measure.Name != "weight_kg" || p.Measure.Unit != "" || p.Measure.AgeUnit != "months" {
		t.Errorf("measure %+v", p.Measure)
	}
	f := p.Fit
	if !slices.Equal(f.Centiles, []float64{3, 10, 25, 50, 75, 90, 97}) || !f.Knots.Auto || !f.Penalty.Auto ||
		f.AgeScale.Kind != "auto" || f.AgeRange != (Range{}) || f.AcceptEdges || f.Bootstrap != 0 || f.Seed != 1 {
		t.Errorf("fit %+v", f)
	}
	if p.Plausible.Z != 5 || p.Plausible.Age != (Range{0, math.Inf(1)}) || p.Plausible.Value != (Range{}) {
		t.Errorf("plausible %+v", p.Plausible)
	}
	if p.Table.Set || !slices.Equal(p.Output.Charts, []string{"svg"}) || p.Output.Points {
		t.Errorf("table %+v output %+v", p.Table, p.Output)
	}
	in := p.Input
	if in.Delimiter != 0 || in.Decimal != DecimalAuto || !slices.Equal(in.Missing, DefaultMissing) ||
		in.DateFormat != "2006-01-02" || in.StratumCodes != nil {
		t.Errorf("input %+v", in)
	}
	if got := p.Taus(); !slices.Equal(got, []float64{0.03, 0.1, 0.25, 0.5, 0.75, 0.9, 0.97}) {
		t.Errorf("Taus %v", got)
	}
}

// planDocExample returns the toml example block of PLAN.md.
func planDocExample(t *testing.T) string {
	doc, err := os.ReadFile("PLAN.md")
	if err != nil {
		t.Fatal(err)
	}
	m := regexp.MustCompile("(?s)```toml\n(.*?)```").FindSubmatch(doc)
	if m == nil {
		t.Fatal("PLAN.md has no toml example")
	}
	return string(m[1])
}

func TestPlanDocExample(t *testing.T) {
	p := parse(t, planDocExample(t))
	in := p.Input
	if in.Age != "age_months" || in.Value != "weight_lb" || in.Unit != "lb" || in.Stratum != "sex" ||
		in.Subject != "child_id" || in.Weight != "svy_weight" {
		t.Errorf("input %+v", in)
	}
	if in.StratumCodes["1"] != "male" || in.StratumCodes["F"] != "female" || len(in.StratumCodes) != 4 {
		t.Errorf("codes %v", in.StratumCodes)
	}
	if p.Measure != (Measure{"weight", "kg", "months"}) {
		t.Errorf("measure %+v", p.Measure)
	}
	if p.Plausible.Value != (Range{0.2, 250}) || p.Plausible.Age != (Range{0, 60}) || p.Plausible.Z != 5 {
		t.Errorf("plausible %+v", p.Plausible)
	}
	if p.Table != (AgeGrid{0, 60, 1, true}) || !slices.Equal(p.Output.Charts, []string{"svg", "pdf"}) {
		t.Errorf("table %+v output %+v", p.Table, p.Output)
	}
	s := p.Spec()
	if s.InputUnit != "lb" || s.Unit != "kg" || s.AgeUnit != "months" || s.ValueRange != p.Plausible.Value {
		t.Errorf("spec %+v", s)
	}
}

// TestPlanDocListsEveryKey keeps PLAN.md and the parser in step.
func TestPlanDocListsEveryKey(t *testing.T) {
	doc, err := os.ReadFile("PLAN.md")
	if err != nil {
		t.Fatal(err)
	}
	documented := map[string]bool{}
	table := ""
	for _, line := range strings.Split(string(doc), "\n") {
		if m := regexp.MustCompile("^##+ \\[([a-z_.]+)\\]").FindStringSubmatch(line); m != nil {
			table = m[1]
			documented[table] = true
		}
		if m := regexp.MustCompile("^\\| `([a-z_]+)` \\|").FindStringSubmatch(line); m != nil && table != "" {
			documented[table+"."+m[1]] = true
		}
	}
	for k := range planKeys {
		if !documented[k] {
			t.Errorf("key %q is not documented in PLAN.md", k)
		}
	}
	for k := range documented {
		if !planKeys[k] && !mapKeys[k] {
			t.Errorf("PLAN.md documents %q, which the parser does not know", k)
		}
	}
}

func TestPlanPolymorphic(t *testing.T) {
	for _, tc := range []struct {
		fit   string
		check func(f Fit) bool
	}{
		{`knots = "auto"`, func(f Fit) bool { return f.Knots.Auto }},
		{`knots = 6`, func(f Fit) bool { return !f.Knots.Auto && f.Knots.Count == 6 && f.Knots.At == nil }},
		{`knots = 0`, func(f Fit) bool { return !f.Knots.Auto && f.Knots.Count == 0 }},
		{`knots = 4.0`, func(f Fit) bool { return f.Knots.Count == 4 }},
		{`knots = [3, 6, 12.5, 24]`, func(f Fit) bool { return slices.Equal(f.Knots.At, []float64{3, 6, 12.5, 24}) && f.Knots.Count == 4 }},
		{`penalty = "auto"`, func(f Fit) bool { return f.Penalty.Auto }},
		{`penalty = 0`, func(f Fit) bool { return !f.Penalty.Auto && f.Penalty.Lambda == 0 }},
		{`penalty = 2.5`, func(f Fit) bool { return f.Penalty == Penalty{Lambda: 2.5} }},
		{`age_scale = "identity"`, func(f Fit) bool { return f.AgeScale == AgeScale{Kind: "identity"} }},
		{`age_scale = "auto"`, func(f Fit) bool { return f.AgeScale == AgeScale{Kind: "auto"} }},
		{`age_range = [0, 60]`, func(f Fit) bool { return f.AgeRange == Range{0, 60} }},
		{`accept_edge_problems = true`, func(f Fit) bool { return f.AcceptEdges }},
		{`age_scale = "log"`, func(f Fit) bool { return f.AgeScale == AgeScale{Kind: "log", AutoShift: true} }},
		{"age_scale = \"log\"\nage_offset = 1", func(f Fit) bool { return f.AgeScale == AgeScale{Kind: "log", Shift: 1} }},
		{"age_scale = \"log\"\nage_offset = -0.5", func(f Fit) bool { return f.AgeScale == AgeScale{Kind: "log", Shift: -0.5} }},
		{"age_scale = \"log\"\nage_offset = \"auto\"", func(f Fit) bool { return f.AgeScale == AgeScale{Kind: "log", AutoShift: true} }},
		{`age_scale = 0.5`, func(f Fit) bool { return f.AgeScale == AgeScale{Kind: "power", Power: 0.5} }},
		{`age_scale = 1`, func(f Fit) bool { return f.AgeScale.Kind == "identity" }},
		{`centiles = [50, 3, 97]`, func(f Fit) bool { return slices.Equal(f.Centiles, []float64{3, 50, 97}) }},
		{`seed = -7`, func(f Fit) bool { return f.Seed == -7 }},
		{`bootstrap = 200`, func(f Fit) bool { return f.Bootstrap == 200 }},
	} {
		p := parse(t, minimalPlan+"[fit]\n"+tc.fit+"\n")
		if !tc.check(p.Fit) {
			t.Errorf("%s: fit %+v", tc.fit, p.Fit)
		}
	}
}

func TestPlanInputOptions(t *testing.T) {
	p := parse(t, `
[input]
file = "/abs/x.csv"
birth = "dob"
measured = "visit"
value = "ht"
unit = "in"
delimiter = "tab"
decimal = "comma"
missing = ["-99", "n/a"]
date_format = "DD/MM/YYYY"
stratum = "sex"
stratum_codes = { 1 = "male", 2 = "female" }
[measure]
name = "height"
unit = "cm"
age_unit = "years"
[plausible]
value = "none"
age = [-inf, 18]
z = 0
`)
	in := p.Input
	if in.File != "/abs/x.csv" || in.Delimiter != '\t' || in.Decimal != DecimalComma ||
		!slices.Equal(in.Missing, []string{"-99", "n/a"}) || in.DateFormat != "DD/MM/YYYY" || in.StratumCodes["2"] != "female" {
		t.Errorf("input %+v", in)
	}
	if p.Plausible.Value != (Range{}) || p.Plausible.Age != (Range{math.Inf(-1), 18}) || p.Plausible.Z != 0 {
		t.Errorf("plausible %+v", p.Plausible)
	}
}

func TestPlanPlausibleDefaults(t *testing.T) {
	for _, tc := range []struct {
		name, unit string
		want       Range
	}{
		{"weight", "kg", Range{0.2, 250}},           // common practice (see units.go)
		{"weight", "g", Range{200, 250000}},         // same, times 1000 (exact SI prefix)
		{"Height", "cm", Range{20, 250}},            // common practice
		{"length", "mm", Range{200, 2500}},          // same, times 10 (exact SI prefix)
		{"head_circumference", "cm", Range{10, 80}}, // common practice
		{"bmi", "kg/m2", Range{5, 100}},             // common practice
		{"weight", "", Range{}},                     // no unit: no default
		{"skinfold", "mm", Range{}},                 // unknown measure: no default
	} {
		p := parse(t, minimalPlan+"[measure]\nname = \""+tc.name+"\"\nunit = \""+tc.unit+"\"\n")
		got := p.Plausible.Value
		if !near(got.Min, tc.want.Min) || !near(got.Max, tc.want.Max) {
			t.Errorf("%s in %q: %+v, want %+v", tc.name, tc.unit, got, tc.want)
		}
	}
}

// planErr parses text and returns the error text, failing when there is none.
func planErr(t *testing.T, text string, sentinel error) string {
	t.Helper()
	_, err := ParsePlan([]byte(text), "plan.toml", ".")
	if err == nil {
		t.Fatalf("no error for:\n%s", text)
	}
	if !errors.Is(err, sentinel) {
		t.Fatalf("error %v is not %v", err, sentinel)
	}
	return err.Error()
}

func TestPlanUnknownKeys(t *testing.T) {
	for _, tc := range []struct {
		text string
		want []string
	}{
		{minimalPlan + "colour = \"red\"\n", []string{`plan.toml:6: unknown key "input.colour"`}},
		{minimalPlan + "\n[fit]\nknot = 4\n", []string{`plan.toml:8: unknown key "fit.knot" (did you mean "fit.knots"?)`}},
		{minimalPlan + "Age = \"x\"\n", []string{`plan.toml:6: unknown key "input.Age" (did you mean "input.age"?)`}},
		{minimalPlan + "[fitt]\na = 1\nb = 2\n", []string{`plan.toml:6: unknown key "fitt" (did you mean "fit"?)`}},
		{minimalPlan + "[fit.extra]\na = 1\n", []string{`plan.toml:6: unknown key "fit.extra"`}},
		{"top = 1\n" + minimalPlan + "[output]\nformat = \"svg\"\n",
			[]string{`plan.toml:1: unknown key "top"`, `plan.toml:8: unknown key "output.format"`}},
		{minimalPlan + "[measure]\n\"age unit\" = \"days\"\n", []string{`plan.toml:7: unknown key "measure.age unit"`}},
		{"fit.knotz = 3\n" + minimalPlan, []string{`plan.toml:1: unknown key "fit.knotz"`}},
	} {
		got := planErr(t, tc.text, ErrUnknownKey)
		for _, w := range tc.want {
			if !strings.Contains(got, w) {
				t.Errorf("error\n%s\nlacks %q", got, w)
			}
		}
		if n := strings.Count(got, "unknown key"); n != len(tc.want) {
			t.Errorf("error\n%s\nreports %d unknown keys, want %d", got, n, len(tc.want))
		}
	}
}

func TestPlanWrongTypes(t *testing.T) {
	for _, tc := range []struct {
		extra, want string
	}{
		{"[fit]\nbootstrap = \"ten\"", `plan.toml:8: fit.bootstrap: want a whole number, got the string "ten"`},
		{"[fit]\nbootstrap = 2.5", `plan.toml:8: fit.bootstrap: want a whole number, got the number 2.5`},
		{"[fit]\nseed = true", `plan.toml:8: fit.seed: want a whole number, got the boolean true`},
		{"[fit]\ncentiles = [3, \"x\"]", `plan.toml:8: fit.centiles: item 2: want a number, got the string "x"`},
		{"[fit]\ncentiles = 50", `plan.toml:8: fit.centiles: want an array of numbers, got the integer 50`},
		{"[fit]\nknots = true", `plan.toml:8: fit.knots: want "auto", a whole number or a list of ages, got the boolean true`},
		{"[fit]\npenalty = [1]", `plan.toml:8: fit.penalty: want a number, got an array`},
		{"[fit]\nage_scale = {a = 1}", `plan.toml:8: fit.age_scale: want a number, got a table`},
		{"[measure]\nname = 3", `plan.toml:8: measure.name: want a string, got the integer 3`},
		{"[output]\npoints = \"yes\"", `plan.toml:8: output.points: want true or false, got the string "yes"`},
		{"[output]\ncharts = \"svg\"", `plan.toml:8: output.charts: want an array of strings, got the string "svg"`},
		{"stratum = \"sex\"\n[input.stratum_codes]\n1 = 2", `plan.toml:9: input.stratum_codes.1: want a label string, got the integer 2`},
		{"[plausible]\nvalue = [1, \"a\"]", `plan.toml:8: plausible.value: item 2: want a number, got the string "a"`},
		{"[table]\nfrom = \"0\"\nto = 1\nstep = 1", `plan.toml:8: table.from: want a number, got the string "0"`},
		{"[measure]\nunit = 1979-05-27", `plan.toml:8: measure.unit: want a string, got a date-time`},
	} {
		got := planErr(t, minimalPlan+"\n"+tc.extra+"\n", ErrType)
		if got != tc.want {
			t.Errorf("error\n%s\nwant\n%s", got, tc.want)
		}
	}
	got := planErr(t, "fit = 3\n"+minimalPlan, ErrType)
	if got != `plan.toml:1: fit must be a table like [fit], not the integer 3` {
		t.Errorf("table type: %s", got)
	}
}

func TestPlanBadValues(t *testing.T) {
	for _, tc := range []struct {
		text, want string
	}{
		{"[input]\nage = \"a\"\nvalue = \"v\"\n", "plan.toml:1: input.file: missing"},
		{"[input]\nfile = \"f\"\nage = \"a\"\n", "plan.toml:1: input.value: missing"},
		{"[input]\nfile = \"f\"\nvalue = \"v\"\n", "plan.toml:1: input.age: missing"},
		{"[input]\nfile = \"f\"\nvalue = \"v\"\nbirth = \"b\"\n", "plan.toml:4: input.birth and input.measured must be given together"},
		{minimalPlan + "birth = \"b\"\nmeasured = \"m\"\n", "plan.toml:4: input.age: give either age or birth and measured, not both"},
		{minimalPlan + "stratum = \"age_months\"\n", `plan.toml:6: input.stratum: column "age_months" is already used for input.age`},
		{minimalPlan + "file2 = 1\nvalue2 = 2\n", `plan.toml:6: unknown key "input.file2"`},
		{minimalPlan + "unit = \"lb\"\n[measure]\nunit = \"cm\"\n", "plan.toml:6: input.unit: cannot convert lb (mass) to cm (length)"},
		{minimalPlan + "delimiter = \"|\"\n", `plan.toml:6: input.delimiter: "|" is not one of auto, comma, semicolon, tab`},
		{minimalPlan + "date_format = \"2006-01-02 15:04\"\n", `plan.toml:6: input.date_format: "2006-01-02 15:04" is not one of`},
		{minimalPlan + "stratum_codes = { 1 = \"m\" }\n", "plan.toml:6: input.stratum_codes: given without an input.stratum column"},
		{minimalPlan + "[measure]\nage_unit = \"monts\"\n", `plan.toml:7: measure.age_unit: age unit "monts" is not one of days, weeks, months, years`},
		{minimalPlan + "[fit]\ncentiles = [3, 100]\n", "plan.toml:7: fit.centiles: 100 is not strictly between 0 and 100"},
		{minimalPlan + "[fit]\ncentiles = [3, 3]\n", "plan.toml:7: fit.centiles: 3 is given twice"},
		{minimalPlan + "[fit]\ncentiles = []\n", "plan.toml:7: fit.centiles: give at least one centile"},
		{minimalPlan + "[fit]\nknots = [2, 1]\n", "plan.toml:7: fit.knots: knots must be strictly increasing (1 after 2)"},
		{minimalPlan + "[fit]\nknots = -1\n", "plan.toml:7: fit.knots: -1 interior knots is outside [0, 200]"},
		{minimalPlan + "[fit]\nknots = \"many\"\n", `plan.toml:7: fit.knots: want "auto", a count or a list of ages, got the string "many"`},
		{minimalPlan + "[fit]\npenalty = -1\n", "plan.toml:7: fit.penalty: -1 is negative"},
		{minimalPlan + "[fit]\npenalty = nan\n", "plan.toml:7: fit.penalty: want a finite number, got NaN"},
		{minimalPlan + "[fit]\nage_scale = \"sqrt\"\n", `plan.toml:7: fit.age_scale: want "auto", "identity", "log" or a power such as 0.5, got the string "sqrt"`},
		{minimalPlan + "[fit]\nage_range = [0, inf]\n", "plan.toml:7: fit.age_range: both ends must be finite"},
		{minimalPlan + "[fit]\nage_range = [60, 0]\n", "plan.toml:7: fit.age_range: want [min, max] with min < max"},
		{minimalPlan + "[fit]\nage_scale = -0.5\n", "plan.toml:7: fit.age_scale: power -0.5 must be positive"},
		{minimalPlan + "[fit]\nage_offset = 1\n", `plan.toml:7: fit.age_offset: applies only with age_scale = "log"`},
		{minimalPlan + "[fit]\nage_scale = \"log\"\nage_offset = \"x\"\n", `plan.toml:8: fit.age_offset: want "auto" or a number, got the string "x"`},
		{minimalPlan + "[fit]\nbootstrap = -1\n", "plan.toml:7: fit.bootstrap: -1 is outside [0, 100000]"},
		{minimalPlan + "[plausible]\nvalue = [5, 1]\n", "plan.toml:7: plausible.value: want [min, max] with min < max"},
		{minimalPlan + "[plausible]\nage = \"all\"\n", `plan.toml:7: plausible.age: want [min, max] or "none", got the string "all"`},
		{minimalPlan + "[plausible]\nz = -1\n", "plan.toml:7: plausible.z: -1 is negative (0 turns the check off)"},
		{minimalPlan + "[table]\nfrom = 0\n", "plan.toml:6: table: give all of from, to and step, or none"},
		{minimalPlan + "[table]\nfrom = 5\nto = 1\nstep = 1\n", "plan.toml:8: table.to: 1 is not above table.from 5"},
		{minimalPlan + "[table]\nfrom = 0\nto = 1\nstep = 0\n", "plan.toml:9: table.step: 0 must be positive"},
		{minimalPlan + "[table]\nfrom = 0\nto = 1e9\nstep = 1\n", "plan.toml:9: table.step: 1 gives more than 1000000 ages"},
		{minimalPlan + "[output]\ncharts = [\"svg\", \"gif\"]\n", `plan.toml:7: output.charts: "gif" is not one of "svg", "png", "pdf"`},
		{minimalPlan + "[output]\ncharts = [\"svg\", \"svg\"]\n", `plan.toml:7: output.charts: "svg" is given twice`},
		{minimalPlan + "[input.stratum_codes]\nM = \"\"\n", "plan.toml:7: input.stratum_codes.M: label must not be empty"},
		{minimalPlan + "subject = \"\"\n", "plan.toml:6: input.subject: must not be empty"},
	} {
		_, err := ParsePlan([]byte(tc.text), "plan.toml", ".")
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("plan\n%s\nerror %v\nwant %q", tc.text, err, tc.want)
			continue
		}
		if !errors.Is(err, ErrPlanValue) && !errors.Is(err, ErrUnknownKey) {
			t.Errorf("%q: error is neither ErrPlanValue nor ErrUnknownKey", tc.want)
		}
	}
}

func TestPlanSeveralErrorsInLineOrder(t *testing.T) {
	text := minimalPlan + "[fit]\nseed = \"x\"\nbootstrap = -2\n[output]\npoints = 1\n"
	_, err := ParsePlan([]byte(text), "plan.toml", ".")
	if err == nil {
		t.Fatal("no error")
	}
	lines := strings.Split(err.Error(), "\n")
	want := []string{"plan.toml:7: fit.seed", "plan.toml:8: fit.bootstrap", "plan.toml:10: output.points"}
	if len(lines) != len(want) {
		t.Fatalf("error:\n%s", err)
	}
	for i, w := range want {
		if !strings.HasPrefix(lines[i], w) {
			t.Errorf("line %d: %q, want prefix %q", i, lines[i], w)
		}
	}
	if !errors.Is(err, ErrType) || !errors.Is(err, ErrPlanValue) {
		t.Errorf("joined error loses its sentinels")
	}
}

func TestPlanSyntaxErrors(t *testing.T) {
	for _, tc := range []struct {
		text string
		line int
	}{
		{"[input]\nfile = \"a.csv\nage = 1\n", 2},         // unterminated string
		{"[input]\nfile = \"a\"\n\n[fit\n", 4},            // unterminated table header
		{"[input]\nfile = \"a\"\nfile = \"b\"\n", 3},      // duplicate key
		{"[input]\nage = \"a\"\n[input]\nvalue = 1\n", 3}, // table defined twice
		{"x = = 1\n", 1},
		{"[fit]\ncentiles = [1, 2\n", 2},
		{"a = 1\nb = 0x\n", 2},
	} {
		got := planErr(t, tc.text, ErrSyntax)
		want := "plan.toml:" + itoa(tc.line) + ": "
		if !strings.HasPrefix(got, want) {
			t.Errorf("%q: error %q, want prefix %q", tc.text, got, want)
		}
	}
}

func itoa(n int) string { return fmtNum(float64(n)) }

func TestLoadPlanResolvesFile(t *testing.T) {
	dir := t.TempDir()
	sub := filepath.Join(dir, "plans")
	if err := os.Mkdir(sub, 0o755); err != nil {
		t.Fatal(err)
	}
	plan := "[input]\nfile = \"../data.csv\"\nage = \"age\"\nvalue = \"wt\"\nunit = \"g\"\n[measure]\nname = \"weight\"\nunit = \"kg\"\n"
	planPath := filepath.Join(sub, "w.toml")
	if err := os.WriteFile(planPath, []byte(plan), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "data.csv"), []byte("age,wt\n1,3500\n2,90\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	p, err := LoadPlan(planPath)
	if err != nil {
		t.Fatal(err)
	}
	if p.Input.File != filepath.Join(sub, "..", "data.csv") && p.Input.File != filepath.Join(dir, "data.csv") {
		t.Fatalf("file %q", p.Input.File)
	}
	tb, err := p.ReadInput()
	if err != nil {
		t.Fatal(err)
	}
	// 3500 g = 3.5 kg is used; 90 g = 0.09 kg is below the default 0.2 kg
	// (common practice, see units.go).
	if len(tb.Rows) != 1 || tb.Rows[0].Value != 3.5 || tb.Excluded[0].Reason != ReasonValueRange {
		t.Fatalf("rows %+v excluded %+v", tb.Rows, tb.Excluded)
	}
	if _, err := LoadPlan(filepath.Join(dir, "none.toml")); err == nil || !strings.Contains(err.Error(), "none.toml") {
		t.Fatalf("missing plan: %v", err)
	}
}

func TestKeyLines(t *testing.T) {
	text := "a = 1\n[t]\n# x = 2\nb.c = 3\n\"d.e\" = 4\ns = \"\"\"\nz = 9\n\"\"\"\ny = 5\n[[arr]]\nk = 1\n"
	lines := keyLines(text)
	for key, want := range map[string]int{"a": 1, "t": 2, "t.b": 4, "t.b.c": 4, "t.d.e": 5, "t.s": 6, "t.y": 9, "arr.k": 11} {
		if lines[key] != want {
			t.Errorf("%s: line %d, want %d", key, lines[key], want)
		}
	}
	if _, ok := lines["t.z"]; ok {
		t.Errorf("key inside a multi-line string was taken as a key")
	}
	if lineOf(lines, "t.q.r") != 2 {
		t.Errorf("lineOf fallback to parent failed")
	}
}
