package intake

import (
	"bytes"
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"github.com/parquet-go/parquet-go"
	"github.com/xuri/excelize/v2"

	"growband/examples/district"
)

// demoCells returns the demo survey's header and cells as written.
func demoCells(t testing.TB) ([]string, [][]string) {
	t.Helper()
	recs, err := csv.NewReader(bytes.NewReader(district.CSV())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs[0], recs[1:]
}

// demoSpec is the demo plan's reading spec (weight).
func demoSpec(t testing.TB) *Spec {
	t.Helper()
	p, err := ParsePlan(district.Plan(district.Weight), "demo.toml", ".")
	if err != nil {
		t.Fatal(err)
	}
	return p.Spec()
}

// demoColumns are how the round trips store each column: numbers, dates
// or text. The weight column holds the survey's planted faults ("12kg",
// "12,4"), and so does length ("n/a"): they stay text, as a registry
// export of raw cells would.
var demoColumns = map[string]string{
	"age_months": "number", "survey_weight": "number",
	"birth_date": "date", "visit_date": "date",
}

// writeParquet stores the cells in a Parquet file: every column optional
// (an empty cell is a null), numbers as DOUBLE, dates as DATE, the rest as
// STRING, in row groups of groupRows rows.
func writeParquet(t testing.TB, header []string, rows [][]string, groupRows int64) []byte {
	t.Helper()
	g := parquet.Group{}
	for _, h := range header {
		switch demoColumns[h] {
		case "number":
			g[h] = parquet.Optional(parquet.Leaf(parquet.DoubleType))
		case "date":
			g[h] = parquet.Optional(parquet.Date())
		default:
			g[h] = parquet.Optional(parquet.String())
		}
	}
	schema := parquet.NewSchema("survey", g)
	idx := make([]int, len(header))
	for j, h := range header {
		leaf, ok := schema.Lookup(h)
		if !ok {
			t.Fatalf("no column %s", h)
		}
		idx[j] = leaf.ColumnIndex
	}
	var buf bytes.Buffer
	w := parquet.NewWriter(&buf, schema, parquet.MaxRowsPerRowGroup(groupRows))
	batch := make([]parquet.Row, 0, len(rows))
	for _, r := range rows {
		row := make(parquet.Row, len(header))
		for j, cell := range r {
			var v parquet.Value
			switch {
			case cell == "":
				row[idx[j]] = parquet.NullValue().Level(0, 0, idx[j])
				continue
			case demoColumns[header[j]] == "number":
				x, err := strconv.ParseFloat(cell, 64)
				if err != nil {
					t.Fatalf("%s: %q", header[j], cell)
				}
				v = parquet.DoubleValue(x)
			case demoColumns[header[j]] == "date":
				d, err := time.Parse("2006-01-02", cell)
				if err != nil {
					t.Fatal(err)
				}
				v = parquet.Int32Value(int32(d.Unix() / 86400))
			default:
				v = parquet.ByteArrayValue([]byte(cell))
			}
			row[idx[j]] = v.Level(0, 1, idx[j])
		}
		batch = append(batch, row)
	}
	if _, err := w.WriteRows(batch); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// writeXLSX stores the cells in a workbook's sheet "survey" after an empty
// first sheet: numbers as numbers, dates as date cells, the rest as text.
func writeXLSX(t testing.TB, header []string, rows [][]string) []byte {
	t.Helper()
	f := excelize.NewFile()
	defer f.Close()
	if _, err := f.NewSheet("survey"); err != nil {
		t.Fatal(err)
	}
	sw, err := f.NewStreamWriter("survey")
	if err != nil {
		t.Fatal(err)
	}
	cells := make([]any, len(header))
	for j, h := range header {
		cells[j] = h
	}
	sw.SetRow("A1", cells)
	dateStyle, _ := f.NewStyle(&excelize.Style{NumFmt: 14})
	for i, r := range rows {
		cells := make([]any, len(r))
		for j, cell := range r {
			switch {
			case cell == "":
				cells[j] = nil
			case demoColumns[header[j]] == "number":
				x, _ := strconv.ParseFloat(cell, 64)
				cells[j] = x
			case demoColumns[header[j]] == "date":
				d, _ := time.Parse("2006-01-02", cell)
				cells[j] = excelize.Cell{StyleID: dateStyle, Value: d}
			default:
				cells[j] = cell
			}
		}
		axis, _ := excelize.CoordinatesToCellName(1, i+2)
		if err := sw.SetRow(axis, cells); err != nil {
			t.Fatal(err)
		}
	}
	if err := sw.Flush(); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := f.Write(&buf); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// sameRows compares two readings of one survey: the same rows used, with
// the same ages, values, weights, strata and subjects, and the same rows
// excluded for the same reasons, line for line.
func sameRows(t *testing.T, what string, a, b *Table) {
	t.Helper()
	if a.Total != b.Total || len(a.Rows) != len(b.Rows) || len(a.Excluded) != len(b.Excluded) {
		t.Fatalf("%s: %d read, %d used, %d excluded; CSV %d, %d, %d", what, b.Total, len(b.Rows), len(b.Excluded), a.Total, len(a.Rows), len(a.Excluded))
	}
	for i := range a.Rows {
		x, y := a.Rows[i], b.Rows[i]
		if x.Line != y.Line || x.Age != y.Age || x.Value != y.Value || x.Weight != y.Weight || x.Stratum != y.Stratum || x.Subject != y.Subject {
			t.Fatalf("%s: row %d is %+v, CSV %+v", what, i, y, x)
		}
	}
	for i := range a.Excluded {
		x, y := a.Excluded[i], b.Excluded[i]
		if x.Line != y.Line || x.Reason != y.Reason {
			t.Fatalf("%s: exclusion %d is line %d %v, CSV line %d %v", what, i, y.Line, y.Reason, x.Line, x.Reason)
		}
	}
}

// TestParquetRoundTrip: the demo survey stored as Parquet (in several row
// groups) reads to the same rows as its CSV, from memory and from disk,
// and so fits the same reference.
func TestParquetRoundTrip(t *testing.T) {
	header, rows := demoCells(t)
	spec := demoSpec(t)
	want, err := Read(bytes.NewReader(district.CSV()), "survey.csv", spec)
	if err != nil {
		t.Fatal(err)
	}
	data := writeParquet(t, header, rows, 1000)
	got, err := Read(bytes.NewReader(data), "survey.parquet", spec)
	if err != nil {
		t.Fatal(err)
	}
	sameRows(t, "parquet", want, got)
	path := filepath.Join(t.TempDir(), "survey.parquet")
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	got, err = ReadFile(path, spec)
	if err != nil {
		t.Fatal(err)
	}
	sameRows(t, "parquet file", want, got)

	// Dates from DATE columns, whatever the text date format.
	ds := *spec
	ds.Age, ds.Birth, ds.Measured, ds.DateFormat = "", "birth_date", "visit_date", "DD/MM/YYYY"
	got, err = Read(bytes.NewReader(data), "survey.parquet", &ds)
	if err != nil {
		t.Fatal(err)
	}
	if n := len(got.Rows); n < len(want.Rows)-10 {
		t.Fatalf("ages from DATE columns: %d rows used, want about %d", n, len(want.Rows))
	}
}

// TestXLSXRoundTrip: the demo survey in a named sheet of a workbook reads
// to the same rows as its CSV; line numbers are the sheet's row numbers.
func TestXLSXRoundTrip(t *testing.T) {
	header, rows := demoCells(t)
	spec := demoSpec(t)
	want, err := Read(bytes.NewReader(district.CSV()), "survey.csv", spec)
	if err != nil {
		t.Fatal(err)
	}
	data := writeXLSX(t, header, rows)
	s := *spec
	s.Sheet = "Survey" // matched ignoring case
	got, err := Read(bytes.NewReader(data), "survey.xlsx", &s)
	if err != nil {
		t.Fatal(err)
	}
	sameRows(t, "xlsx", want, got)
	path := filepath.Join(t.TempDir(), "survey.xlsx")
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	if got, err = ReadFile(path, &s); err != nil {
		t.Fatal(err)
	}
	sameRows(t, "xlsx file", want, got)

	// Dates stored as date cells give the same ages as the text dates.
	ds := s
	ds.Age, ds.Birth, ds.Measured = "", "birth_date", "visit_date"
	fromText, err := Read(bytes.NewReader(district.CSV()), "survey.csv", &Spec{Birth: "birth_date", Measured: "visit_date",
		Value: spec.Value, Stratum: spec.Stratum, Subject: spec.Subject, Weight: spec.Weight, Unit: spec.Unit,
		ValueRange: spec.ValueRange, AgeRange: spec.AgeRange, StratumCodes: spec.StratumCodes, Measure: spec.Measure})
	if err != nil {
		t.Fatal(err)
	}
	fromCells, err := Read(bytes.NewReader(data), "survey.xlsx", &ds)
	if err != nil {
		t.Fatal(err)
	}
	sameRows(t, "xlsx dates", fromText, fromCells)

	// The first sheet is empty: reading it is refused, naming it.
	if _, err := Read(bytes.NewReader(data), "survey.xlsx", spec); err == nil {
		t.Fatal("empty first sheet read")
	}
	s.Sheet = "nope"
	if _, err := Read(bytes.NewReader(data), "survey.xlsx", &s); err == nil || !bytes.Contains([]byte(err.Error()), []byte(`no sheet named "nope" (have: Sheet1, survey)`)) {
		t.Fatalf("unknown sheet: %v", err)
	}
}

// TestXLSXShortRows: a row with trailing empty cells is padded, a row with
// cells beyond the header is refused, and fully empty rows are skipped
// without shifting line numbers.
func TestXLSXShortRows(t *testing.T) {
	f := excelize.NewFile()
	f.SetSheetRow("Sheet1", "A1", &[]any{"age", "value", "note"})
	f.SetSheetRow("Sheet1", "A2", &[]any{1.5, 4.25})
	f.SetSheetRow("Sheet1", "A4", &[]any{2, 5, "x", "extra"})
	f.SetSheetRow("Sheet1", "A5", &[]any{"3,5", "6,25", ""})
	var buf bytes.Buffer
	if err := f.Write(&buf); err != nil {
		t.Fatal(err)
	}
	tb, err := Read(bytes.NewReader(buf.Bytes()), "s.xlsx", &Spec{Age: "age", Value: "value"})
	if err != nil {
		t.Fatal(err)
	}
	if tb.Total != 3 || len(tb.Rows) != 1 || tb.Rows[0].Line != 2 || tb.Rows[0].Value != 4.25 {
		t.Fatalf("rows %+v excluded %+v", tb.Rows, tb.Excluded)
	}
	if e := tb.Excluded[0]; e.Line != 4 || e.Reason != ReasonFields {
		t.Fatalf("long row: %+v", e)
	}
	if e := tb.Excluded[1]; e.Line != 5 || e.Reason != ReasonNotNumber {
		t.Fatalf("text with decimal commas among number cells: %+v", e)
	}
}
