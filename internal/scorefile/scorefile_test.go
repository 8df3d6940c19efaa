package scorefile

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/curve"
	"growband/internal/intake"
)

// publishedBirthLMS holds WHO Child Growth Standards 2006 weight-for-age L, M, S at
// birth and day 1 for boys (0.3487, 3.3464, 0.14602; 0.3127, 3.3174,
// 0.14600) and girls (0.3809, 3.2322, 0.14171; 0.3470, 3.1957, 0.14173),
// from memory. Only the birth rows enter expected values.
const publishedBirthLMS = "# age_unit = days\n# measure = weight\n# unit = kg\nsex,age,L,M,S\n" +
	"male,0,0.3487,3.3464,0.14602\nmale,1,0.3127,3.3174,0.14600\n" +
	"female,0,0.3809,3.2322,0.14171\nfemale,1,0.3470,3.1957,0.14173\n"

func testRef(t *testing.T) *curve.Reference {
	t.Helper()
	r, err := curve.LoadLMSTable(strings.NewReader(publishedBirthLMS), "lms-birth.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// lmsZ is Cole's (1990) LMS z-score, z = ((y/M)^L - 1)/(L S), written out
// here independently of curve.
func lmsZ(y, l, m, s float64) float64 { return (math.Pow(y/m, l) - 1) / (l * s) }

func read(t *testing.T, r *curve.Reference, in string) *intake.Table {
	t.Helper()
	tb, err := intake.Read(strings.NewReader(in), "in.csv", Spec(r))
	if err != nil {
		t.Fatal(err)
	}
	return tb
}

// TestScoreFile scores a file against the WHO birth values: every row comes
// back in order, scored rows with the LMS z-score and its centile, the
// others with their reason.
func TestScoreFile(t *testing.T) {
	r := testRef(t)
	in := "id,Sex,age,weight\n" +
		"a,male,0,2.5\n" +
		"b,female,0,4.1\n" +
		"c,male,5,4\n" + // beyond the table's last age
		"d,other,0,3\n" +
		"e,female,0,heavy\n" +
		"f,male,0,\"3\n" // unterminated quote
	rows, err := Score(r, read(t, r, in), nil)
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	if err := WriteCSV(&out, strings.Split("id,Sex,age,weight", ","), rows); err != nil {
		t.Fatal(err)
	}
	cells, err := csv.NewReader(&out).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(cells) != 7 || strings.Join(cells[0], ",") != "id,Sex,age,weight,z,centile,flag" {
		t.Fatalf("output %q", cells)
	}
	for i, want := range []float64{lmsZ(2.5, 0.3487, 3.3464, 0.14602), lmsZ(4.1, 0.3809, 3.2322, 0.14171)} {
		if got := cells[i+1][4]; got != ZText(want) {
			t.Errorf("row %d: z %s, LMS formula %.4f", i+1, got, want)
		}
		if !rows[i].OK || math.Abs(rows[i].Z-want) > 1e-12 { // the same formula in floating point
			t.Errorf("row %d: z %v, LMS formula %v", i+1, rows[i].Z, want)
		}
	}
	for i, want := range map[int]string{3: "age outside", 4: "unknown stratum", 5: "not a number", 6: "quote"} {
		if cells[i][4] != "" || cells[i][5] != "" || !strings.Contains(cells[i][6], want) {
			t.Errorf("row %d: %q, want empty z and centile and a flag with %q", i, cells[i], want)
		}
	}
	if rows[4].Line != 6 {
		t.Errorf("line of row e: %d, want 6", rows[4].Line)
	}
}

// TestScoreNeedsStratum checks that a file without a stratum column is
// refused against a reference with two strata, unless the caller gives
// every row one.
func TestScoreNeedsStratum(t *testing.T) {
	r := testRef(t)
	tb := read(t, r, "age,value\n0,3.3464\n")
	if _, err := Score(r, tb, nil); !errors.Is(err, ErrNoStratum) || !strings.Contains(err.Error(), "in.csv") {
		t.Fatalf("error %v, want ErrNoStratum naming the file", err)
	}
	rows, err := Score(r, tb, func(string) string { return "male" })
	if err != nil {
		t.Fatal(err)
	}
	// At the median M the LMS z-score is 0 (exact identity).
	if !rows[0].OK || math.Abs(rows[0].Z) > 1e-12 {
		t.Errorf("z at the median %v", rows[0].Z)
	}
}

// TestWriteJSON checks the JSON form: null z and centile for a row not
// scored, the caution, and the header.
func TestWriteJSON(t *testing.T) {
	r := testRef(t)
	rows, err := Score(r, read(t, r, "sex,age,weight\nmale,0,2.5\nmale,9,3\n"), nil)
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	if err := WriteJSON(&out, r, []string{"sex", "age", "weight"}, rows); err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Measure, Caution string
		Rows             []struct {
			Z    *float64
			Flag string
		}
	}
	if err := json.Unmarshal(out.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if doc.Measure != "weight" || doc.Caution == "" || len(doc.Rows) != 2 {
		t.Fatalf("document %+v", doc)
	}
	if want := lmsZ(2.5, 0.3487, 3.3464, 0.14602); doc.Rows[0].Z == nil || math.Abs(*doc.Rows[0].Z-want) > 5e-4 {
		t.Errorf("z %v, LMS formula %v (rounded to 3 decimals)", doc.Rows[0].Z, want)
	}
	if doc.Rows[1].Z != nil || doc.Rows[1].Flag == "" {
		t.Errorf("unscored row %+v", doc.Rows[1])
	}
}

// TestWriteCSVNeutralises writes cells a spreadsheet would run as formulas
// (OWASP's CSV-injection examples, from memory) and bytes that are not
// UTF-8: they come back quoted and replaced, while negative numbers stay
// numbers.
func TestWriteCSVNeutralises(t *testing.T) {
	var buf strings.Builder
	rows := []Row{{Fields: []string{"=cmd|' /C calc'!A0", "-1.5", "\xff"}, Z: -1.25, Centile: 10.56, Flag: "@x", OK: true}}
	if err := WriteCSV(&buf, []string{"+child", "age", "name"}, rows); err != nil {
		t.Fatal(err)
	}
	want := "'+child,age,name,z,centile,flag\n'=cmd|' /C calc'!A0,-1.5,\uFFFD,-1.250,10.56,'@x\n"
	if buf.String() != want {
		t.Errorf("got %q, want %q", buf.String(), want)
	}
}

func TestCentileTextTails(t *testing.T) {
	// Centiles of z = 4.9 and -4.9: 100 Phi(z) and its complement (gonum
	// v0.17.0 distuv.UnitNormal); each prints distinct from 100 and 0.
	for _, c := range []struct {
		z    float64
		want string
	}{{4.9, "99.9999521"}, {-4.9, "0.0000479"}, {0, "50.00"}, {-3, "0.135"}, {3.09, "99.900"}, {2.5, "99.379"}} {
		got := CentileText(100 * distuv.UnitNormal.CDF(c.z))
		if got != c.want {
			t.Errorf("z %g: %q, want %q", c.z, got, c.want)
		}
	}
}
