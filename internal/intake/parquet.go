package intake

import (
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/format"
)

// Apache Parquet files are read with github.com/parquet-go/parquet-go, a
// maintained pure-Go implementation of the format, one row group at a time
// and a batch of rows at a time within it, so memory does not grow with the
// file.

// parquetBatch is how many rows are decoded at once.
const parquetBatch = 1024

// parquetSource reads the rows of a flat Parquet file. The header is the
// leaf columns' names (nested ones joined with "."); each value becomes the
// text a CSV export would hold: numbers in shortest form with a decimal
// point, a null as an empty cell, DATE and TIMESTAMP values as dates. Row
// k (from 1) is reported as line k+1, as if the file had a header line.
type parquetSource struct {
	name   string
	f      *parquet.File
	groups []parquet.RowGroup
	g      int
	rows   parquet.Rows
	buf    []parquet.Row
	bufN   int
	bufAt  int
	row    int
	kinds  []colKind
	nf     int
}

// colKind says how a column's values are turned into text.
type colKind int

const (
	plainCol  colKind = iota
	dateCol           // INT32 days since 1970-01-01
	millisCol         // INT64 timestamps in milliseconds
	microsCol
	nanosCol
)

func newParquetSource(ra io.ReaderAt, size int64, name string) (src *parquetSource, header []string, err error) {
	defer func() {
		if p := recover(); p != nil {
			src, header, err = nil, nil, errAt(name, 0, ErrBinary, "not a readable Parquet file (%v)", p)
		}
	}()
	f, err := parquet.OpenFile(ra, size, parquet.SkipPageIndex(true), parquet.SkipBloomFilters(true))
	if err != nil {
		return nil, nil, errAt(name, 0, ErrBinary, "not a readable Parquet file: %v", err)
	}
	s := &parquetSource{name: name, f: f, groups: f.RowGroups()}
	sch := f.Schema()
	for _, path := range sch.Columns() {
		leaf, ok := sch.Lookup(path...)
		if !ok {
			return nil, nil, errAt(name, 0, ErrHeader, "column %s cannot be found in the schema", strings.Join(path, "."))
		}
		if leaf.MaxRepetitionLevel > 0 {
			return nil, nil, errAt(name, 0, ErrHeader, "column %s holds lists; only flat tables are read", strings.Join(path, "."))
		}
		header = append(header, strings.Join(path, "."))
		s.kinds = append(s.kinds, kindOf(leaf.Node.Type().LogicalType()))
	}
	if len(header) == 0 {
		return nil, nil, errAt(name, 0, ErrEmpty, "the Parquet file has no columns")
	}
	s.nf = len(header)
	return s, header, nil
}

func kindOf(lt *format.LogicalType) colKind {
	if lt == nil {
		return plainCol
	}
	switch v := lt.Value.(type) {
	case *format.DateType:
		return dateCol
	case *format.TimestampType:
		switch v.Unit.Value.(type) {
		case *format.MilliSeconds:
			return millisCol
		case *format.MicroSeconds:
			return microsCol
		case *format.NanoSeconds:
			return nanosCol
		}
	}
	return plainCol
}

func (s *parquetSource) next() (rec record, err error) {
	defer func() {
		if p := recover(); p != nil {
			rec, err = record{}, errAt(s.name, s.row+1, ErrBinary, "not a readable Parquet file (%v)", p)
		}
	}()
	for s.bufAt >= s.bufN {
		if err := s.fill(); err != nil {
			return record{}, err
		}
	}
	row := s.buf[s.bufAt]
	s.bufAt++
	s.row++
	fields := make([]string, s.nf)
	for _, v := range row {
		c := v.Column()
		if c < 0 || c >= s.nf {
			continue
		}
		fields[c] = s.text(c, v)
	}
	return record{line: s.row + 1, fields: fields}, nil
}

// fill decodes the next batch of rows, moving to the next row group when
// one is done.
func (s *parquetSource) fill() error {
	for {
		if s.rows == nil {
			if s.g >= len(s.groups) {
				return io.EOF
			}
			s.rows = s.groups[s.g].Rows()
			s.g++
		}
		if s.buf == nil {
			s.buf = make([]parquet.Row, parquetBatch)
		}
		n, err := s.rows.ReadRows(s.buf)
		s.bufN, s.bufAt = n, 0
		if err != nil && !errors.Is(err, io.EOF) {
			return errAt(s.name, s.row+1, ErrBinary, "rows cannot be read: %v", err)
		}
		if errors.Is(err, io.EOF) || n == 0 {
			s.rows.Close()
			s.rows = nil
		}
		if n > 0 {
			return nil
		}
	}
}

func (s *parquetSource) text(c int, v parquet.Value) string {
	if v.IsNull() {
		return ""
	}
	switch v.Kind() {
	case parquet.Boolean:
		return strconv.FormatBool(v.Boolean())
	case parquet.Int32:
		if s.kinds[c] == dateCol {
			return time.Unix(int64(v.Int32())*86400, 0).UTC().Format(DefaultDateFormat)
		}
		return strconv.FormatInt(int64(v.Int32()), 10)
	case parquet.Int64:
		x := v.Int64()
		switch s.kinds[c] {
		case millisCol:
			return time.UnixMilli(x).UTC().Format(DefaultDateFormat)
		case microsCol:
			return time.UnixMicro(x).UTC().Format(DefaultDateFormat)
		case nanosCol:
			return time.Unix(0, x).UTC().Format(DefaultDateFormat)
		}
		return strconv.FormatInt(x, 10)
	case parquet.Float:
		return formatCell(float64(v.Float()), 32)
	case parquet.Double:
		return formatCell(v.Double(), 64)
	case parquet.ByteArray, parquet.FixedLenByteArray:
		return string(v.ByteArray())
	}
	return fmt.Sprint(v)
}

// formatCell writes a number as the shortest decimal that reads back to it;
// NaN and infinities are written as such and refused as not a number.
func formatCell(x float64, bits int) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return strconv.FormatFloat(x, 'g', -1, 64)
	}
	return strconv.FormatFloat(x, 'g', -1, bits)
}

// dateCell reads the dates of DATE and TIMESTAMP columns, which text
// writes in ISO form whatever the date format asked for text columns.
func (s *parquetSource) dateCell(c int, t string) (time.Time, bool) {
	if c < 0 || c >= len(s.kinds) || s.kinds[c] == plainCol {
		return time.Time{}, false
	}
	d, err := time.Parse(DefaultDateFormat, t)
	return d, err == nil
}

func (s *parquetSource) close() error {
	if s.rows != nil {
		s.rows.Close()
		s.rows = nil
	}
	return nil
}
