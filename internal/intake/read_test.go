package intake

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// readString reads a CSV text with spec and fails the test on an error.
func readString(t *testing.T, in string, spec *Spec) *Table {
	t.Helper()
	tb, err := Read(strings.NewReader(in), "t.csv", spec)
	if err != nil {
		t.Fatalf("Read: %v", err)
	}
	checkCounts(t, tb)
	return tb
}

// checkCounts checks the invariant Used + Excluded == rows read, and that
// reasons are valid and both slices are in file order.
func checkCounts(t testing.TB, tb *Table) {
	t.Helper()
	if len(tb.Rows)+len(tb.Excluded) != tb.Total {
		t.Fatalf("%d used + %d excluded != %d read", len(tb.Rows), len(tb.Excluded), tb.Total)
	}
	sum := 0
	for _, c := range tb.Counts() {
		sum += c.N
	}
	if sum != len(tb.Excluded) {
		t.Fatalf("counts add to %d, want %d", sum, len(tb.Excluded))
	}
	for i := range tb.Excluded {
		if !tb.Excluded[i].Reason.valid() {
			t.Fatalf("excluded line %d has invalid reason %d", tb.Excluded[i].Line, tb.Excluded[i].Reason)
		}
		if i > 0 && tb.Excluded[i].Line < tb.Excluded[i-1].Line {
			t.Fatalf("Excluded not in file order")
		}
	}
	for i := 1; i < len(tb.Rows); i++ {
		if tb.Rows[i].Line <= tb.Rows[i-1].Line {
			t.Fatalf("Rows not in file order")
		}
	}
}

func near(a, b float64) bool {
	const tol = 1e-13 // relative; the conversions are a single multiply or divide
	return math.Abs(a-b) <= tol*math.Max(1, math.Abs(b))
}

func TestReadDelimiters(t *testing.T) {
	spec := &Spec{Age: "age", Value: "value", Stratum: "group"}
	for _, tc := range []struct {
		name  string
		in    string
		delim rune
	}{
		{"comma", "age,value,group\n1,2.5,a\n2,3.5,\"b;c\tx\"\n", ','},
		{"semicolon", "age;value;group\n1;2.5;a\n2;3.5;\"b,c\tx\"\n", ';'},
		{"tab", "age\tvalue\tgroup\n1\t2.5\ta\n2\t3.5\t\"b,c;x\"\n", '\t'},
		// The header's quoted name holds two commas; outside quotes there are
		// more semicolons.
		{"quoted header", "age;value;\"group,with,commas\"\n1;2.5;a\n2;3.5;b\n", ';'},
		{"quoted newline", "age,value,group\n1,2.5,\"a\nb\"\n2,3.5,c\n", ','},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s := *spec
			if tc.name == "quoted header" {
				s.Stratum = "group,with,commas"
			}
			tb := readString(t, tc.in, &s)
			if tb.Delimiter != tc.delim {
				t.Fatalf("delimiter %q, want %q", tb.Delimiter, tc.delim)
			}
			if len(tb.Rows) != 2 || tb.Rows[0].Age != 1 || tb.Rows[1].Value != 3.5 {
				t.Fatalf("rows %+v", tb.Rows)
			}
			if tc.name == "quoted newline" && (tb.Rows[1].Line != 4 || tb.Rows[0].Stratum != "a\nb") {
				t.Fatalf("quoted newline: %+v", tb.Rows)
			}
		})
	}
	// An explicit delimiter overrides detection.
	tb := readString(t, "age;value,x\n1;2,3\n", &Spec{Age: "age", Value: "value,x", Delimiter: ';', Decimal: DecimalComma})
	if len(tb.Rows) != 1 || tb.Rows[0].Value != 2.3 {
		t.Fatalf("explicit delimiter: %+v %+v", tb.Rows, tb.Excluded)
	}
}

func TestReadBOMAndCRLF(t *testing.T) {
	spec := &Spec{Age: "age", Value: "value"}
	for _, in := range []string{
		"\ufeffage,value\r\n1,2\r\n3,4\r\n",
		"\ufeffage,value\n1,2\n3,4",
		"age,value\r\n1,2\r\n3,4",
		"\n\nage,value\n1,2\n\n3,4\n", // blank lines carry no row
	} {
		tb := readString(t, in, spec)
		if len(tb.Rows) != 2 || tb.Rows[1].Age != 3 || tb.Rows[1].Value != 4 || tb.Header[0] != "age" {
			t.Fatalf("%q: rows %+v header %q", in, tb.Rows, tb.Header)
		}
		if tb.Rows[1].Fields[1] != "4" {
			t.Fatalf("%q: field %q keeps a line ending", in, tb.Rows[1].Fields[1])
		}
	}
	tb := readString(t, "\n\nage,value\n1,2\n\n3,4\n", spec)
	if tb.Rows[0].Line != 4 || tb.Rows[1].Line != 6 {
		t.Fatalf("lines %d %d, want 4 6", tb.Rows[0].Line, tb.Rows[1].Line)
	}
}

func TestReadDecimalComma(t *testing.T) {
	for _, tc := range []struct {
		name    string
		in      string
		decimal Decimal
		comma   bool
		values  []float64 // used values in order
		nan     int       // rows excluded as not a number
	}{
		{"auto semicolon", "age;value\n1;12,5\n2;-0,25\n3;7\n", DecimalAuto, true, []float64{12.5, -0.25, 7}, 0},
		{"auto tab", "age\tvalue\n1,5\t12,5\n", DecimalAuto, true, []float64{12.5}, 0},
		{"auto semicolon, points", "age;value\n1;12.5\n2;3\n", DecimalAuto, false, []float64{12.5, 3}, 0},
		// Mixed separators: read as points; the comma cell is excluded, never misread.
		{"auto mixed", "age;value\n1;12.5\n2;3,5\n", DecimalAuto, false, []float64{12.5}, 1},
		// With a comma delimiter, auto never switches to a decimal comma.
		{"auto comma delimiter", "age,value\n1,\"12,5\"\n", DecimalAuto, false, nil, 1},
		{"forced comma", "age,value\n1,\"12,5\"\n2,\"1.5\"\n", DecimalComma, true, []float64{12.5}, 1},
		{"forced point", "age;value\n1;12,5\n2;1.5\n", DecimalPoint, false, []float64{1.5}, 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			tb := readString(t, tc.in, &Spec{Age: "age", Value: "value", Decimal: tc.decimal})
			if tb.DecimalComma != tc.comma {
				t.Fatalf("DecimalComma = %v, want %v", tb.DecimalComma, tc.comma)
			}
			if len(tb.Rows) != len(tc.values) {
				t.Fatalf("rows %+v excluded %+v", tb.Rows, tb.Excluded)
			}
			for i, v := range tc.values {
				if tb.Rows[i].Value != v {
					t.Fatalf("row %d value %g, want %g", i, tb.Rows[i].Value, v)
				}
			}
			n := 0
			for _, c := range tb.Counts() {
				if c.Reason == ReasonNotNumber {
					n = c.N
				}
			}
			if n != tc.nan {
				t.Fatalf("%d not-a-number rows, want %d: %+v", n, tc.nan, tb.Excluded)
			}
		})
	}
}

func TestReadDates(t *testing.T) {
	for _, tc := range []struct {
		birth, measured, format, unit string
		want                          float64
		source                        string
	}{
		{"2020-02-29", "2021-02-28", "", "days", 365, "exact calendar fact: 2020-02-29 to 2021-02-28 spans no 29 February"},
		{"2019-03-01", "2020-03-01", "", "days", 366, "exact calendar fact: includes 2020-02-29"},
		{"2021-03-01", "2022-03-01", "", "days", 365, "exact calendar fact: 2021 and 2022 are common years"},
		{"2000-01-01", "2004-01-01", "", "years", 4, "exact identity: 1461 days / 365.25"},
		{"2000-01-01", "2004-01-01", "", "months", 48, "exact identity: 1461 days / 30.4375"},
		{"2021-01-01", "2021-01-15", "", "weeks", 2, "exact identity: 14 days / 7"},
		{"2021-01-01", "2021-01-01", "", "days", 0, "same day"},
		{"29/02/2020", "28/02/2021", "02/01/2006", "days", 365, "exact calendar fact, day/month/year"},
		{"2/29/2020", "2/28/2021", "MM/DD/YYYY", "days", 365, "exact calendar fact, month/day/year, one-digit month"},
		{"29.02.2020", "1.3.2020", "DD.MM.YYYY", "days", 1, "exact calendar fact: 2020 is a leap year"},
		{"20200229", "20210228", "YYYYMMDD", "days", 365, "exact calendar fact"},
		{"1900-01-01", "2300-01-01", "", "days", 146097, "exact calendar fact: 400 Gregorian years have 146097 days"},
	} {
		in := "dob,visit,wt\n" + tc.birth + "," + tc.measured + ",3\n"
		tb := readString(t, in, &Spec{Birth: "dob", Measured: "visit", Value: "wt", AgeUnit: tc.unit, DateFormat: tc.format})
		if len(tb.Rows) != 1 {
			t.Fatalf("%s %s: excluded %+v", tc.birth, tc.measured, tb.Excluded)
		}
		if !near(tb.Rows[0].Age, tc.want) {
			t.Errorf("%s to %s in %s = %.17g, want %g (%s)", tc.birth, tc.measured, tc.unit, tb.Rows[0].Age, tc.want, tc.source)
		}
	}
	// 365 days in months (common practice: 30.4375 days a month).
	tb := readString(t, "b,m,v\n2020-02-29,2021-02-28,1\n", &Spec{Birth: "b", Measured: "m", Value: "v"})
	if got := tb.Rows[0].Age; !near(got, 365/30.4375) {
		t.Fatalf("months = %g", got)
	}
}

func TestReadUnits(t *testing.T) {
	for _, tc := range []struct {
		from, to string
		in, want float64
		source   string
	}{
		{"lb", "kg", 1, 0.45359237, "exact: international yard and pound agreement (1959)"},
		{"lb", "kg", 22, 22 * 0.45359237, "exact: same agreement"},
		{"kg", "lb", 0.45359237, 1, "exact: inverse of the same definition"},
		{"oz", "kg", 16, 0.45359237, "exact: 16 oz = 1 lb"},
		{"g", "kg", 3500, 3.5, "exact: SI prefix"},
		{"kg", "g", 3.5, 3500, "exact: SI prefix"},
		{"in", "cm", 1, 2.54, "exact: international yard and pound agreement (1959)"},
		{"in", "cm", 30, 76.2, "exact: same agreement"},
		{"cm", "in", 2.54, 1, "exact: inverse"},
		{"mm", "cm", 505, 50.5, "exact: SI prefix"},
		{"m", "cm", 1.05, 105, "exact: SI prefix"},
		{"kg", "kg", 7.25, 7.25, "no conversion"},
		{"", "kg", 7.25, 7.25, "no conversion"},
	} {
		in := "age,v\n1," + fmtNum(tc.in) + "\n"
		tb := readString(t, in, &Spec{Age: "age", Value: "v", InputUnit: tc.from, Unit: tc.to})
		if len(tb.Rows) != 1 || !near(tb.Rows[0].Value, tc.want) {
			t.Errorf("%g %s in %s: got %+v, want %g (%s)", tc.in, tc.from, tc.to, tb.Rows, tc.want, tc.source)
		}
	}
	for _, bad := range [][2]string{{"lb", "cm"}, {"stone", "kg"}, {"kg", "kg/m2"}} {
		_, err := Read(strings.NewReader("age,v\n1,2\n"), "u.csv", &Spec{Age: "age", Value: "v", InputUnit: bad[0], Unit: bad[1]})
		if !errors.Is(err, ErrBadSpec) {
			t.Errorf("%s to %s: err %v, want ErrBadSpec", bad[0], bad[1], err)
		}
	}
}

// TestReadReasons has one row per exclusion reason, plus used rows, and
// checks the reason, the line and the count of every row.
func TestReadReasons(t *testing.T) {
	in := strings.Join([]string{
		"id,dob,visit,wt,sex,w",                 // 1
		"a,2020-01-01,2020-02-01,4.1,M,1",       // 2 used
		"b,2020-01-01,2020-02-01,4.1,M",         // 3 fields
		"c,2020-01-01,2020-02-01,\"4\"x,M,1",    // 4 quotes
		"d,2020-01-01,2020-02-01,NA,M,1",        // 5 missing value
		"e,2020-01-01,2020-02-01,4.1kg,M,1",     // 6 not a number
		"f,2020-01-01,2020-02-30,4.1,M,1",       // 7 unparsable date (30 February)
		"g,2020-02-01,2020-01-01,4.1,M,1",       // 8 measured before birth
		"h,1980-01-01,2020-01-01,4.1,M,1",       // 9 age outside the plausible range
		"i,2020-01-01,2020-02-01,4100,M,1",      // 10 value outside the plausible range
		"j,2020-01-01,2020-02-01,4.1,M,0",       // 11 non-positive weight
		"k,2020-01-01,2020-02-01,4.1,X,1",       // 12 unknown stratum code
		"a,2020-01-01,2020-02-01,4.1,M,2",       // 13 duplicate of line 2 (same subject, age, value)
		"l,2020-01-01,2020-02-01,4.1,M,1e999",   // 14 non-finite weight
		"m,2020-01-01,2020-02-01,,M,1",          // 15 missing (empty)
		"n,2020-01-01,2020-02-01,4.2,2,1",       // 16 used; code 2
		"o,2020-01-01,2020-02-01,4.3, f ,1",     // 17 used; code matched ignoring case and spaces
		"p,2020-01-01,2020-02-01,4.4,M,-1",      // 18 negative weight
		"q,2020-01-01,2020-02-01,4.5,,1",        // 19 missing stratum
		",2020-01-01,2020-02-01,4.5,M,1",        // 20 missing subject
		"r,2020-01-01,2020-02-01,4.1,M,1,extra", // 21 fields
	}, "\n") + "\n"
	spec := &Spec{
		Birth: "dob", Measured: "visit", Value: "wt", Stratum: "sex", Subject: "id", Weight: "w",
		ValueRange: Range{Min: 0.2, Max: 250}, AgeRange: Range{Min: 0, Max: 240},
		StratumCodes: map[string]string{"M": "male", "1": "male", "2": "female", "F": "female"},
	}
	tb := readString(t, in, spec)
	wantEx := map[int]Reason{
		3: ReasonFields, 4: ReasonQuotes, 5: ReasonMissing, 6: ReasonNotNumber, 7: ReasonBadDate,
		8: ReasonDateOrder, 9: ReasonAgeRange, 10: ReasonValueRange, 11: ReasonWeight, 12: ReasonStratum,
		13: ReasonDuplicate, 14: ReasonWeight, 15: ReasonMissing, 18: ReasonWeight, 19: ReasonMissing,
		20: ReasonMissing, 21: ReasonFields,
	}
	if tb.Total != 20 {
		t.Fatalf("Total = %d, want 20", tb.Total)
	}
	if len(tb.Excluded) != len(wantEx) {
		t.Fatalf("%d excluded, want %d: %+v", len(tb.Excluded), len(wantEx), tb.Excluded)
	}
	for _, e := range tb.Excluded {
		if wantEx[e.Line] != e.Reason {
			t.Errorf("line %d: reason %q (%s), want %q", e.Line, e.Reason, e.Detail, wantEx[e.Line])
		}
	}
	wantUsed := []struct {
		line    int
		stratum string
		value   float64
	}{{2, "male", 4.1}, {16, "female", 4.2}, {17, "female", 4.3}}
	if len(tb.Rows) != len(wantUsed) {
		t.Fatalf("used %+v", tb.Rows)
	}
	for i, w := range wantUsed {
		r := tb.Rows[i]
		if r.Line != w.line || r.Stratum != w.stratum || r.Value != w.value || r.Age != 31/30.4375 {
			t.Errorf("row %d = %+v, want %+v", i, r, w)
		}
	}
	want := map[Reason]int{ReasonFields: 2, ReasonQuotes: 1, ReasonMissing: 4, ReasonNotNumber: 1, ReasonBadDate: 1,
		ReasonDateOrder: 1, ReasonAgeRange: 1, ReasonValueRange: 1, ReasonWeight: 3, ReasonStratum: 1, ReasonDuplicate: 1}
	for _, c := range tb.Counts() {
		if want[c.Reason] != c.N {
			t.Errorf("count %q = %d, want %d", c.Reason, c.N, want[c.Reason])
		}
		delete(want, c.Reason)
	}
	if len(want) != 0 {
		t.Errorf("reasons not counted: %v", want)
	}
	// The detail says which column and value.
	for _, e := range tb.Excluded {
		if e.Line == 6 && !strings.Contains(e.Text(), `wt: "4.1kg"`) {
			t.Errorf("detail %q", e.Text())
		}
		if e.Line == 13 && e.Detail != "same as line 2" {
			t.Errorf("duplicate detail %q", e.Detail)
		}
		if e.Line == 4 && !strings.Contains(e.Detail, `c,2020-01-01,2020-02-01,"4"x,M,1`) {
			t.Errorf("quote detail %q does not show the row", e.Detail)
		}
	}
}

func TestReadMissingMarkersAndNumbers(t *testing.T) {
	in := "age,v\n1,NA\n2,NaN\n3,.\n4,-\n5, \n6,nan\n7,Inf\n8,0x10\n9,1_0\n10,+1.5e1\n11,.5\n12,-\n"
	tb := readString(t, in, &Spec{Age: "age", Value: "v"})
	got := map[int]Reason{}
	for _, e := range tb.Excluded {
		got[e.Line] = e.Reason
	}
	want := map[int]Reason{2: ReasonMissing, 3: ReasonMissing, 4: ReasonMissing, 5: ReasonMissing, 6: ReasonMissing,
		7: ReasonNotNumber, 8: ReasonNotNumber, 9: ReasonNotNumber, 10: ReasonNotNumber, 13: ReasonMissing}
	for line, r := range want {
		if got[line] != r {
			t.Errorf("line %d: %q, want %q", line, got[line], r)
		}
	}
	if len(tb.Rows) != 2 || tb.Rows[0].Value != 15 || tb.Rows[1].Value != 0.5 {
		t.Errorf("rows %+v", tb.Rows)
	}
	// Custom markers replace the defaults; an empty cell stays missing.
	tb = readString(t, "age,v\n1,-99\n2,NA\n3,\n", &Spec{Age: "age", Value: "v", Missing: []string{"-99"}})
	if r := tb.Excluded; len(r) != 3 || r[0].Reason != ReasonMissing || r[1].Reason != ReasonNotNumber || r[2].Reason != ReasonMissing {
		t.Errorf("custom markers: %+v", r)
	}
}

func TestReadDuplicatesWithoutSubject(t *testing.T) {
	in := "age,v,note\n1,2,x\n1,2,y\n1,2,x\n1, 2,x\n"
	tb := readString(t, in, &Spec{Age: "age", Value: "v"})
	if len(tb.Rows) != 3 || len(tb.Excluded) != 1 || tb.Excluded[0].Line != 4 || tb.Excluded[0].Reason != ReasonDuplicate {
		t.Fatalf("rows %+v excluded %+v", tb.Rows, tb.Excluded)
	}
	tb = readString(t, in, &Spec{Age: "age", Value: "v", KeepDuplicates: true})
	if len(tb.Rows) != 4 {
		t.Fatalf("KeepDuplicates: %+v", tb.Excluded)
	}
}

func TestReadFileErrors(t *testing.T) {
	spec := &Spec{Age: "a", Value: "weight_kg"}
	for _, tc := range []struct {
		name string
		in   string
		err  error
		text string
	}{
		{"missing column", "a,b,c\n1,2,3\n", ErrColumn, `survey.csv:1: column "weight_kg" not in header (have: a, b, c)`},
		{"missing columns", "x,b\n1,2\n", ErrColumn, `survey.csv:1: columns "a", "weight_kg" not in header (have: x, b)`},
		{"empty", "", ErrEmpty, "survey.csv: file is empty"},
		{"blank", " \r\n\n", ErrEmpty, "survey.csv: file is empty"},
		{"only BOM", "\ufeff", ErrEmpty, "survey.csv: file is empty"},
		{"no rows", "a,weight_kg\n", ErrNoRows, "survey.csv:1: no data rows below the header"},
		{"NUL", "a,weight_kg\n1,2\n3\x004,5\n", ErrBinary, "survey.csv:3: NUL byte"},
		{"UTF-16", "\xff\xfea\x00,\x00", ErrBinary, "survey.csv:1: file is UTF-16"},
		{"bad UTF-8 header", "a,w\xe9ight_kg\n1,2\n", ErrBinary, "survey.csv:1: header is not UTF-8 text (invalid byte 0xe9 at column 4)"},
		{"bad header quote", "a,\"weight_kg\n1,2\n", ErrHeader, "survey.csv:1: header row"},
		{"duplicate header", "a,weight_kg,weight_kg\n1,2,3\n", ErrHeader, `survey.csv:1: column "weight_kg" appears more than once`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Read(strings.NewReader(tc.in), "survey.csv", spec)
			if !errors.Is(err, tc.err) {
				t.Fatalf("err = %v, want %v", err, tc.err)
			}
			if !strings.HasPrefix(err.Error(), tc.text) {
				t.Fatalf("err text %q, want prefix %q", err.Error(), tc.text)
			}
		})
	}
	_, err := ReadFile("no/such/file.csv", spec)
	if err == nil || !strings.Contains(err.Error(), "no/such/file.csv") {
		t.Fatalf("missing file: %v", err)
	}
}

func TestReadBadSpec(t *testing.T) {
	for _, s := range []Spec{
		{Age: "a"},
		{Value: "v"},
		{Age: "a", Birth: "b", Measured: "m", Value: "v"},
		{Birth: "b", Value: "v"},
		{Age: "a", Value: "a"},
		{Age: "a", Value: "v", AgeUnit: "fortnights"},
		{Age: "a", Value: "v", DateFormat: "2006-01-02T15:04"},
		{Age: "a", Value: "v", Delimiter: '|'},
		{Age: "a", Value: "v", Decimal: 7},
		{Age: "a", Value: "v", ValueRange: Range{Min: 2, Max: 1}},
	} {
		if _, err := Read(strings.NewReader("a,v\n1,2\n"), "s.csv", &s); !errors.Is(err, ErrBadSpec) {
			t.Errorf("%+v: err %v, want ErrBadSpec", s, err)
		}
	}
	if _, err := Read(strings.NewReader("a,v\n1,2\n"), "s.csv", nil); !errors.Is(err, ErrBadSpec) {
		t.Errorf("nil spec: %v", err)
	}
}

func TestDetectDelimiter(t *testing.T) {
	for _, tc := range []struct {
		header string
		want   rune
	}{
		{"a,b,c", ','},
		{"a;b;c", ';'},
		{"a\tb\tc", '\t'},
		{`"a,b,c";d`, ';'},
		{"\"x;y\"\t\"z,w\"\tq", '\t'},
		{"single", ','},
		{"a,b;c", ','}, // tie: comma first
	} {
		if got := detectDelimiter([]byte(tc.header)); got != tc.want {
			t.Errorf("%q: %q, want %q", tc.header, got, tc.want)
		}
	}
}

func TestIsDecimal(t *testing.T) {
	for s, want := range map[string]bool{
		"1": true, "-1": true, "+1.5": true, ".5": true, "5.": true, "1e3": true, "1.5E-3": true,
		"": false, ".": false, "-": false, "e3": false, "1e": false, "1e+": false, "Inf": false, "NaN": false,
		"0x1p3": false, "1_000": false, "1,5": false, "1.2.3": false, " 1": false,
	} {
		if got := isDecimal(s); got != want {
			t.Errorf("isDecimal(%q) = %v", s, got)
		}
	}
}
