package intake

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/xuri/excelize/v2"
)

// Excel workbooks are read with github.com/xuri/excelize/v2, a maintained
// pure-Go reader of the Office Open XML format (ECMA-376) that streams a
// sheet's rows instead of building every cell.

// xlsxUnzipLimit bounds the unpacked size of a workbook, so that a small
// compressed file cannot expand without end (a "zip bomb"); 2 GiB holds
// tens of millions of measurement cells (common practice).
const xlsxUnzipLimit = 2 << 30

// Excel stores a date as the number of days since 1899-12-30 (the 1900 date
// system, whose day 60 is the non-existent 29 February 1900); serials from
// 61 on are exact. The largest is 9999-12-31 (ECMA-376 Part 1, 18.17.4.1).
const (
	excelFirstSerial = 61
	excelLastSerial  = 2958465
)

var excelEpoch = time.Date(1899, 12, 30, 0, 0, 0, 0, time.UTC)

// xlsxSource reads the rows of one worksheet. Cells are read as stored
// (numbers with a decimal point, whatever the display format), a row with
// fewer cells than the header is padded with empty cells, and fully empty
// rows are skipped; a row's line is its row number in the sheet.
type xlsxSource struct {
	name string
	f    *excelize.File
	rows *excelize.Rows
	row  int // rows consumed
	nf   int
}

func newXLSXSource(ra io.ReaderAt, size int64, name, sheet string) (src *xlsxSource, header []string, err error) {
	defer func() {
		// The library is not ours: a workbook that makes it panic is
		// refused as unreadable rather than ending the program.
		if p := recover(); p != nil {
			src, header, err = nil, nil, errAt(name, 0, ErrBinary, "not a readable Excel workbook (%v)", p)
		}
	}()
	opt := excelize.Options{RawCellValue: true, UnzipSizeLimit: xlsxUnzipLimit}
	f, err := excelize.OpenReader(io.NewSectionReader(ra, 0, size), opt)
	if err != nil {
		return nil, nil, errAt(name, 0, ErrBinary, "not a readable Excel workbook: %v", err)
	}
	sheets := f.GetSheetList()
	if len(sheets) == 0 {
		f.Close()
		return nil, nil, errAt(name, 0, ErrEmpty, "the workbook has no worksheets")
	}
	if sheet == "" {
		sheet = sheets[0]
	} else if !containsFold(sheets, &sheet) {
		f.Close()
		return nil, nil, errAt(name, 0, ErrBadSpec, "no sheet named %q (have: %s)", sheet, strings.Join(sheets, ", "))
	}
	rows, err := f.Rows(sheet)
	if err != nil {
		f.Close()
		return nil, nil, errAt(name, 0, ErrBinary, "sheet %q cannot be read: %v", sheet, err)
	}
	s := &xlsxSource{name: name, f: f, rows: rows}
	for {
		rec, err := s.nextRaw()
		if err == io.EOF {
			s.close()
			return nil, nil, errAt(name, 0, ErrEmpty, "sheet %q is empty", sheet)
		}
		if err != nil {
			s.close()
			return nil, nil, err
		}
		s.nf = len(rec.fields)
		if rec.line != 1 {
			return nil, nil, s.headerNotFirst(rec.line)
		}
		return s, rec.fields, nil
	}
}

// headerNotFirst refuses a sheet whose header is not on its first row:
// the reader counts data rows by their row numbers, which must then hold.
func (s *xlsxSource) headerNotFirst(line int) error {
	s.close()
	return errAt(s.name, line, ErrHeader, "the header must be on the sheet's first row (found on row %d)", line)
}

func containsFold(names []string, name *string) bool {
	for _, n := range names {
		if strings.EqualFold(strings.TrimSpace(n), strings.TrimSpace(*name)) {
			*name = n
			return true
		}
	}
	return false
}

// nextRaw returns the next row with a non-empty cell, as written.
func (s *xlsxSource) nextRaw() (rec record, err error) {
	defer func() {
		if p := recover(); p != nil {
			rec, err = record{}, errAt(s.name, s.row, ErrBinary, "not a readable Excel workbook (%v)", p)
		}
	}()
	for s.rows.Next() {
		s.row++
		cells, err := s.rows.Columns()
		if err != nil {
			return record{}, errAt(s.name, s.row, ErrBinary, "row cannot be read: %v", err)
		}
		for len(cells) > 0 && strings.TrimSpace(cells[len(cells)-1]) == "" {
			cells = cells[:len(cells)-1]
		}
		if len(cells) == 0 {
			continue
		}
		return record{line: s.row, fields: cells}, nil
	}
	if err := s.rows.Error(); err != nil {
		return record{}, errAt(s.name, s.row, ErrBinary, "sheet cannot be read: %v", err)
	}
	return record{}, io.EOF
}

func (s *xlsxSource) next() (record, error) {
	rec, err := s.nextRaw()
	if err != nil {
		return rec, err
	}
	for len(rec.fields) < s.nf {
		rec.fields = append(rec.fields, "")
	}
	return rec, nil
}

// dateCell reads a cell holding a number as an Excel date serial; the time
// of day, if any, is dropped.
func (s *xlsxSource) dateCell(_ int, c string) (time.Time, bool) {
	if !isDecimal(c) {
		return time.Time{}, false
	}
	x, err := strconv.ParseFloat(c, 64)
	if err != nil || x < excelFirstSerial || x >= excelLastSerial+1 {
		return time.Time{}, false
	}
	return excelEpoch.AddDate(0, 0, int(math.Floor(x))), true
}

func (s *xlsxSource) close() error {
	if s.rows != nil {
		s.rows.Close()
	}
	if err := s.f.Close(); err != nil {
		return fmt.Errorf("%s: %w", s.name, err)
	}
	return nil
}
