package intake

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"
)

// ReadFile opens the CSV file at path and reads it with Read, naming the
// file by path in messages.
func ReadFile(path string, spec *Spec) (*Table, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err // *fs.PathError names the file
	}
	defer f.Close()
	return Read(f, path, spec)
}

// Read reads a measurement CSV file with a header row. name is used in
// messages. Every data row ends up either in Table.Rows or, with one reason,
// in Table.Excluded; problems with single rows never fail the read.
//
// Read fails with an *Error (wrapping ErrEmpty, ErrNoRows, ErrColumn,
// ErrBinary, ErrHeader or ErrBadSpec) when the file cannot be used at all:
// it is empty, holds no data rows, is not UTF-8 text, or lacks a column named
// in spec. It does not panic on any input.
func Read(r io.Reader, name string, spec *Spec) (*Table, error) {
	if spec == nil {
		spec = &Spec{}
	}
	p, err := spec.prepare(name)
	if err != nil {
		return nil, err
	}
	data, err := io.ReadAll(r)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	data, err = checkText(data, name)
	if err != nil {
		return nil, err
	}

	hdr, hdrLine := headerLine(data)
	if off := firstInvalidUTF8(hdr); off >= 0 {
		return nil, errAt(name, hdrLine, ErrBinary, "header is not UTF-8 text (invalid byte 0x%02x at column %d); save the file as UTF-8",
			hdr[off], off+1)
	}
	delim := p.Delimiter
	if delim == 0 {
		delim = detectDelimiter(hdr)
	}

	cr := csv.NewReader(bytes.NewReader(data))
	cr.Comma = delim
	cr.FieldsPerRecord = -1
	header, err := cr.Read()
	if err != nil {
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			return nil, errAt(name, pe.StartLine, ErrHeader, "header row: %v", pe.Err)
		}
		return nil, errAt(name, hdrLine, ErrHeader, "header row: %v", err)
	}
	hdrLine, _ = cr.FieldPos(0)
	if p.Look != nil {
		if err := p.look(header); err != nil {
			return nil, errAt(name, hdrLine, ErrColumn, "%s", err)
		}
	}
	cols, err := p.columns(header, name, hdrLine)
	if err != nil {
		return nil, err
	}

	recs, err := readRecords(cr, data)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if len(recs) == 0 {
		return nil, errAt(name, hdrLine, ErrNoRows, "no data rows below the header")
	}

	t := &Table{
		Name:       name,
		Header:     header,
		Delimiter:  delim,
		Total:      len(recs),
		hasWeight:  p.Weight != "",
		Stratum:    p.Stratum,
		hasStratum: p.Stratum != "",
		hasSubject: p.Subject != "",
	}
	switch p.Decimal {
	case DecimalComma:
		t.DecimalComma = true
	case DecimalAuto:
		t.DecimalComma = (delim == ';' || delim == '\t') && commaNumbers(recs, cols, len(header))
	}
	rd := rowReader{p: p, cols: cols, header: header, comma: t.DecimalComma, seen: map[string]int{}}
	for i := range recs {
		rec := &recs[i]
		if rec.quoteErr != "" {
			t.Excluded = append(t.Excluded, Exclusion{Line: rec.line, Reason: ReasonQuotes, Detail: rec.quoteErr})
			continue
		}
		row, reason, detail := rd.row(rec)
		if reason != 0 {
			t.Excluded = append(t.Excluded, Exclusion{Line: rec.line, Reason: reason, Detail: detail, Fields: rec.fields})
			continue
		}
		t.Rows = append(t.Rows, row)
	}
	return t, nil
}

// checkText strips a UTF-8 byte-order mark and refuses content that is not
// text: empty, UTF-16, or holding NUL bytes.
func checkText(data []byte, name string) ([]byte, error) {
	if bytes.HasPrefix(data, []byte{0xFF, 0xFE}) || bytes.HasPrefix(data, []byte{0xFE, 0xFF}) {
		return nil, errAt(name, 1, ErrBinary, "file is UTF-16 text; save it as UTF-8 CSV")
	}
	data = bytes.TrimPrefix(data, []byte{0xEF, 0xBB, 0xBF})
	if len(bytes.TrimSpace(data)) == 0 {
		return nil, errAt(name, 0, ErrEmpty, "file is empty")
	}
	if i := bytes.IndexByte(data, 0); i >= 0 {
		line := 1 + bytes.Count(data[:i], []byte{'\n'})
		return nil, errAt(name, line, ErrBinary, "NUL byte: binary content, not a CSV text file (a spreadsheet or UTF-16 file?)")
	}
	return data, nil
}

// colIndex holds header positions of the Spec's columns; -1 when unused.
type colIndex struct {
	age, birth, measured, value, stratum, subject, weight int
}

func (p *prepared) columns(header []string, name string, line int) (colIndex, error) {
	pos := map[string]int{}
	dup := map[string]bool{}
	for i, h := range header {
		h = strings.TrimSpace(h)
		if _, ok := pos[h]; ok {
			dup[h] = true
			continue
		}
		pos[h] = i
	}
	var missing []string
	find := func(col string) int {
		if col == "" {
			return -1
		}
		i, ok := pos[col]
		if !ok {
			missing = append(missing, strconv.Quote(col))
			return -1
		}
		return i
	}
	c := colIndex{
		age: find(p.Age), birth: find(p.Birth), measured: find(p.Measured), value: find(p.Value),
		stratum: find(p.Stratum), subject: find(p.Subject), weight: find(p.Weight),
	}
	if len(missing) > 0 {
		have := make([]string, len(header))
		for i, h := range header {
			have[i] = strings.TrimSpace(h)
		}
		what := "column " + missing[0]
		if len(missing) > 1 {
			what = "columns " + strings.Join(missing, ", ")
		}
		return c, errAt(name, line, ErrColumn, "%s not in header (have: %s)", what, strings.Join(have, ", "))
	}
	for _, col := range []string{p.Age, p.Birth, p.Measured, p.Value, p.Stratum, p.Subject, p.Weight} {
		if col != "" && dup[col] {
			return c, errAt(name, line, ErrHeader, "column %q appears more than once in the header", col)
		}
	}
	return c, nil
}

// record is one data record as read by encoding/csv.
type record struct {
	line     int
	fields   []string
	quoteErr string // set for a record encoding/csv could not split
}

// readRecords reads the data records. A quoting error spoils only its own
// record: encoding/csv resumes after it.
func readRecords(cr *csv.Reader, data []byte) ([]record, error) {
	var recs []record
	var lines [][]byte // physical lines, split only when a quoting error needs them
	for {
		before := cr.InputOffset()
		fields, err := cr.Read()
		if err == io.EOF {
			return recs, nil
		}
		if err != nil {
			var pe *csv.ParseError
			if !errors.As(err, &pe) {
				return nil, err
			}
			if lines == nil {
				lines = bytes.Split(data, []byte{'\n'})
			}
			recs = append(recs, record{line: pe.StartLine, quoteErr: pe.Err.Error() + ": " + rawText(lines, pe.StartLine, pe.Line)})
			if cr.InputOffset() == before {
				return recs, nil // no progress: give up on the rest rather than loop
			}
			continue
		}
		line, _ := cr.FieldPos(0)
		recs = append(recs, record{line: line, fields: fields})
	}
}

// rawText returns physical lines from..to (1-based) joined, trimmed to a
// readable length, so a row that could not be split is still shown.
func rawText(lines [][]byte, from, to int) string {
	const maxShown = 200 // bytes of a broken row shown in its detail
	if from < 1 || from > len(lines) {
		return ""
	}
	to = min(max(to, from), len(lines))
	s := string(bytes.TrimRight(bytes.Join(lines[from-1:to], []byte{'\n'}), "\r\n"))
	if len(s) > maxShown {
		n := maxShown
		for n > 0 && !utf8.RuneStart(s[n]) {
			n--
		}
		s = s[:n] + "..."
	}
	return s
}

// commaNumbers reports whether the numeric cells of well-formed records use
// a decimal comma: some look like 12,5 and none like 12.5.
func commaNumbers(recs []record, c colIndex, nf int) bool {
	nComma := 0
	for i := range recs {
		f := recs[i].fields
		if len(f) != nf {
			continue
		}
		for _, k := range []int{c.age, c.value, c.weight} {
			if k < 0 {
				continue
			}
			s := strings.TrimSpace(f[k])
			if looksPoint(s) {
				return false
			}
			if looksComma(s) {
				nComma++
			}
		}
	}
	return nComma > 0
}

// rowReader turns records into rows.
type rowReader struct {
	p      *prepared
	cols   colIndex
	header []string
	comma  bool
	seen   map[string]int // duplicate key -> line of the first row
}

func (rd *rowReader) row(rec *record) (Row, Reason, string) {
	p, c, f := rd.p, rd.cols, rec.fields
	row := Row{Line: rec.line, Weight: 1, Fields: f}
	if len(f) != len(rd.header) {
		return row, ReasonFields, fmt.Sprintf("%d fields, header has %d", len(f), len(rd.header))
	}
	cell := func(k int) string { return strings.TrimSpace(f[k]) }
	var (
		r      Reason
		detail string
	)
	if c.age >= 0 {
		if row.Age, r, detail = rd.number(f, c.age); r != 0 {
			return row, r, detail
		}
	} else {
		b, r, detail := rd.date(f, c.birth)
		if r != 0 {
			return row, r, detail
		}
		m, r, detail := rd.date(f, c.measured)
		if r != 0 {
			return row, r, detail
		}
		days := (m.Unix() - b.Unix()) / 86400 // exact: both are UTC midnights
		if days < 0 {
			return row, ReasonDateOrder, fmt.Sprintf("%s %s is before %s %s", p.Measured, cell(c.measured), p.Birth, cell(c.birth))
		}
		row.Age = float64(days) / p.days
	}
	if row.Value, r, detail = rd.number(f, c.value); r != 0 {
		return row, r, detail
	}
	row.Value *= p.factor
	if c.weight >= 0 {
		if row.Weight, r, detail = rd.number(f, c.weight); r == ReasonNotNumber && strings.HasSuffix(detail, "not finite") {
			return row, ReasonWeight, detail
		} else if r != 0 {
			return row, r, detail
		}
		if !(row.Weight > 0) || math.IsInf(row.Weight, 0) {
			return row, ReasonWeight, fmt.Sprintf("%s: %s", p.Weight, cell(c.weight))
		}
	}
	if c.stratum >= 0 {
		s := cell(c.stratum)
		if p.missing[s] {
			return row, ReasonMissing, p.Stratum
		}
		label, ok := p.label(s)
		if !ok {
			return row, ReasonStratum, fmt.Sprintf("%s: %q", p.Stratum, s)
		}
		row.Stratum = label
	}
	if c.subject >= 0 {
		s := cell(c.subject)
		if p.missing[s] {
			return row, ReasonMissing, p.Subject
		}
		row.Subject = s
	}
	if !p.AgeRange.Contains(row.Age) {
		return row, ReasonAgeRange, fmt.Sprintf("age %s %s not in [%g, %g]", fmtNum(row.Age), p.AgeUnit, p.AgeRange.Min, p.AgeRange.Max)
	}
	if !p.ValueRange.Contains(row.Value) {
		return row, ReasonValueRange, fmt.Sprintf("%s %s %s not in [%g, %g]", p.Value, fmtNum(row.Value), p.Unit, p.ValueRange.Min, p.ValueRange.Max)
	}
	if !p.KeepDuplicates {
		var key string
		if c.subject >= 0 {
			key = row.Subject + "\x00" + fmtNum(row.Age) + "\x00" + fmtNum(row.Value)
		} else {
			key = strings.Join(f, "\x00")
		}
		if first, dup := rd.seen[key]; dup {
			return row, ReasonDuplicate, fmt.Sprintf("same as line %d", first)
		}
		rd.seen[key] = rec.line
	}
	return row, 0, ""
}

// number reads a numeric cell, honouring missing markers and the decimal
// separator; it never accepts NaN or ±Inf.
func (rd *rowReader) number(f []string, k int) (float64, Reason, string) {
	col := strings.TrimSpace(rd.header[k])
	s := strings.TrimSpace(f[k])
	if rd.p.missing[s] {
		return 0, ReasonMissing, col
	}
	t := s
	if rd.comma {
		if strings.Contains(t, ".") {
			return 0, ReasonNotNumber, fmt.Sprintf("%s: %q has a decimal point but the file uses decimal commas", col, s)
		}
		t = strings.Replace(t, ",", ".", 1)
	} else if looksComma(t) {
		return 0, ReasonNotNumber, fmt.Sprintf("%s: %q has a decimal comma (set the decimal option to comma)", col, s)
	}
	if !isDecimal(t) {
		return 0, ReasonNotNumber, fmt.Sprintf("%s: %q", col, s)
	}
	x, err := strconv.ParseFloat(t, 64)
	if err != nil || math.IsInf(x, 0) || math.IsNaN(x) {
		return 0, ReasonNotNumber, fmt.Sprintf("%s: %q is not finite", col, s)
	}
	return x, 0, ""
}

func (rd *rowReader) date(f []string, k int) (time.Time, Reason, string) {
	col := strings.TrimSpace(rd.header[k])
	s := strings.TrimSpace(f[k])
	if rd.p.missing[s] {
		return time.Time{}, ReasonMissing, col
	}
	d, err := time.Parse(rd.p.layout, s)
	if err != nil {
		return time.Time{}, ReasonBadDate, fmt.Sprintf("%s: %q is not a date in the format %s", col, s, rd.p.DateFormat)
	}
	return d, 0, ""
}

func fmtNum(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
