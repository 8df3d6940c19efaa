package intake

import (
	"bytes"
	"errors"
	"io"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

// fuzzSpecs are read against every fuzzed CSV text.
var fuzzSpecs = []Spec{
	{Age: "age", Value: "v", Stratum: "sex", Subject: "id", Weight: "w",
		ValueRange: Range{Min: 0, Max: 100}, AgeRange: Range{Min: 0, Max: 240},
		StratumCodes: map[string]string{"1": "male", "M": "male", "2": "female"}},
	{Birth: "dob", Measured: "visit", Value: "v", AgeUnit: "years", InputUnit: "lb", Unit: "kg"},
	{Age: "age", Value: "v", Decimal: DecimalComma, Delimiter: ';', KeepDuplicates: true},
}

func FuzzRead(f *testing.F) {
	for _, s := range []string{
		"age,v,sex,id,w\n1,2,M,a,1\n2,3,2,b,0.5\n2,3,2,b,0.5\n",
		"\ufeffage;v;sex;id;w\r\n1,5;2,5;1;a;1\r\n",
		"age\tv\tsex\tid\tw\n1\t\"2\"\tM\ta\t1\n",
		"dob,visit,v\n2020-02-29,2021-02-28,20\n2021-01-01,2020-01-01,3\n",
		"age,v,sex,id,w\n1,\"2\"x,M,a,1\n3,4\n",
		"age,v\n\"1\n2\",3\n",
		"age,v,sex,id,w\n1e999,NaN,,,-1\n",
		"a,\"b\nc",
		"id,note,age,v\nx,\"open,1,2\ny,\"ok\",3,4\nz,\"two\nlines\",5,6\n",
		"age;v\n1;12,5\n2;120.5\n3;7,25\n",
		"",
		"\x00",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		for i := range fuzzSpecs {
			tb, err := Read(bytes.NewReader(data), "f.csv", &fuzzSpecs[i])
			if err != nil {
				var e *Error
				if !errors.As(err, &e) || !strings.HasPrefix(err.Error(), "f.csv") {
					t.Fatalf("error %v is not a positioned *Error", err)
				}
				continue
			}
			checkCounts(t, tb)
			var idx []int
			for k := 0; k < len(tb.Rows); k += 2 {
				idx = append(idx, k)
			}
			tb.Exclude(idx, ReasonImplausible, nil)
			checkCounts(t, tb)
			if len(tb.All()) != tb.Total {
				t.Fatalf("All lost rows")
			}
			if err := WriteExcluded(io.Discard, tb); err != nil {
				t.Fatal(err)
			}
		}
	})
}

func FuzzParsePlan(f *testing.F) {
	f.Add([]byte(minimalPlan))
	f.Add([]byte(minimalPlan + "[fit]\nknots = [1, 2]\npenalty = 0\nage_scale = 0.5\n"))
	f.Add([]byte(minimalPlan + "[fit]\nknots = 4\nage_scale = \"log\"\nage_offset = 1\n[plausible]\nvalue = [0, inf]\n"))
	f.Add([]byte(minimalPlan + "stratum = \"sex\"\n[input.stratum_codes]\n1 = \"male\"\n[table]\nfrom = 0\nto = 5\nstep = 1\n"))
	f.Add([]byte("[input]\nfile = \"a.csv\"\nbirth = \"b\"\nmeasured = \"m\"\nvalue = \"v\"\nunit = \"lb\"\n[measure]\nunit = \"kg\"\n"))
	f.Add([]byte("fit = 1\n[fitt]\nx = \"\"\"\na = 1\n\"\"\"\n"))
	f.Add([]byte("[input\nfile = "))
	f.Add([]byte("a.b.c = { d = [1, {e = 2}] }\n'q.r' = 1979-05-27\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		p, err := ParsePlan(data, "p.toml", "/d")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "p.toml") {
				t.Fatalf("error %q does not name the plan", err)
			}
			return
		}
		// A plan that parses must give a Spec that Read accepts.
		if _, err := p.Spec().prepare("x.csv"); err != nil {
			t.Fatalf("valid plan gives a bad spec: %v", err)
		}
	})
}

// fuzzFormat checks one fuzzed file in a binary format: no panic, a
// positioned error or a table whose counts add up.
func fuzzFormat(t *testing.T, data []byte, name string, specs []Spec) {
	for i := range specs {
		tb, err := Read(bytes.NewReader(data), name, &specs[i])
		if err != nil {
			if !strings.HasPrefix(err.Error(), name) {
				t.Fatalf("error %q does not name the file", err)
			}
			continue
		}
		checkCounts(t, tb)
		if err := WriteExcluded(io.Discard, tb); err != nil {
			t.Fatal(err)
		}
	}
}

// fuzzBinarySpecs read the seed files' columns by name and by dates.
var fuzzBinarySpecs = []Spec{
	{Age: "age", Value: "v", Stratum: "sex", StratumCodes: map[string]string{"1": "male", "F": "female"}},
	{Birth: "dob", Measured: "visit", Value: "v", DateFormat: "DD/MM/YYYY", Sheet: "data"},
	{Look: &UsualNames, KeepDuplicates: true},
}

func FuzzReadXLSX(f *testing.F) {
	header, rows := []string{"age", "v", "sex", "dob", "visit"}, [][]string{
		{"1.5", "4.2", "F", "2020-01-02", "2020-02-16"}, {"x", "12,5", "1", "", "2021-03-01"}, {"3", "", "M", "2020-01-02", "2019-01-01"},
	}
	f.Add(xlsxSeed(f, "Sheet1", header, rows))
	f.Add(xlsxSeed(f, "data", header, rows[:1]))
	f.Add(xlsxSeed(f, "Sheet1", []string{"value"}, nil))
	f.Add([]byte("PK\x03\x04"))
	f.Fuzz(func(t *testing.T, data []byte) {
		fuzzFormat(t, data, "f.xlsx", fuzzBinarySpecs)
	})
}

func FuzzReadParquet(f *testing.F) {
	header, rows := []string{"age", "v", "sex", "dob", "visit"}, [][]string{
		{"1.5", "4.2", "F", "2020-01-02", "2020-02-16"}, {"x", "12,5", "1", "", "2021-03-01"}, {"3", "", "M", "2020-01-02", "2019-01-01"},
	}
	f.Add(writeParquet(f, header, rows, 2))
	f.Add(writeParquet(f, []string{"age_months", "v", "birth_date"}, [][]string{{"3", "5.5", "2020-01-01"}, {"", "6", ""}}, 1))
	f.Add([]byte("PAR1PAR1"))
	f.Fuzz(func(t *testing.T, data []byte) {
		fuzzFormat(t, data, "f.parquet", fuzzBinarySpecs)
	})
}

// xlsxSeed writes a small workbook with one sheet of text cells.
func xlsxSeed(t testing.TB, sheet string, header []string, rows [][]string) []byte {
	t.Helper()
	x := excelize.NewFile()
	defer x.Close()
	if sheet != "Sheet1" {
		x.SetSheetName("Sheet1", sheet)
	}
	for i, r := range append([][]string{header}, rows...) {
		cells := make([]any, len(r))
		for j, c := range r {
			cells[j] = c
		}
		axis, _ := excelize.CoordinatesToCellName(1, i+1)
		x.SetSheetRow(sheet, axis, &cells)
	}
	var buf bytes.Buffer
	if err := x.Write(&buf); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}
