package intake

import (
	"bufio"
	"bytes"
	"fmt"
	"hash/maphash"
	"io"
	"os"
	"strings"
	"time"
)

// decimalSample is how many data rows are looked at to detect the decimal
// mark of a file read with Decimal = DecimalAuto: enough to outvote a few
// odd cells, few enough to hold in memory while streaming (common practice).
const decimalSample = 10000

// source is a file format's record reader: CSV, xlsx or Parquet.
type source interface {
	next() (record, error) // io.EOF after the last record
	// dateCell converts a cell the format stores as a date (an xlsx serial
	// number, a Parquet DATE) to a date; ok is false for text.
	dateCell(col int, s string) (t time.Time, ok bool)
	close() error
}

// record is one data record as split by a source.
type record struct {
	line     int
	fields   []string
	quoteErr string // set for a row that could not be split
}

// Reader streams the rows of a measurement file: each call of Next returns
// one data row, used or excluded with its reason, so a file of any length
// is read in constant memory (apart from the duplicate check, which keeps a
// key per row unless Spec.KeepDuplicates). Read collects them into a Table.
type Reader struct {
	name    string
	src     source
	p       *prepared
	header  []string
	hdrLine int
	delim   rune
	comma   bool
	rd      rowReader
	buf     []record
	total   int
}

// NewReader reads the header of a measurement file from r and returns a
// Reader for its rows. The format is recognised from the content: an Excel
// workbook (.xlsx), an Apache Parquet file, or else delimited text (CSV).
// Workbooks and Parquet files are read into memory first; use OpenFile to
// read a Parquet file from disk one row group at a time.
//
// NewReader fails with an *Error, like Read, when the file cannot be used at
// all; it does not panic on any input.
func NewReader(r io.Reader, name string, spec *Spec) (*Reader, error) {
	br := bufio.NewReaderSize(r, 64<<10)
	peek, _ := br.Peek(4)
	magic := append([]byte(nil), peek...) // Peek's bytes do not survive reading
	if isXLSX(magic) || isParquet(magic) {
		data, err := io.ReadAll(br)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", name, err)
		}
		return newReaderAt(bytes.NewReader(data), int64(len(data)), magic, name, spec)
	}
	return newCSVReader(br, name, spec)
}

// NewReaderBytes is NewReader for a file held in memory; it also checks the
// whole of a text file for NUL bytes up front, so that Next meets no
// file-level error once the header is read.
func NewReaderBytes(data []byte, name string, spec *Spec) (*Reader, error) {
	if !isXLSX(data) && !isParquet(data) {
		if _, err := checkText(data, name); err != nil {
			return nil, err
		}
	}
	return NewReader(bytes.NewReader(data), name, spec)
}

// OpenFile opens the measurement file at path and returns a Reader for it;
// the caller closes it. Parquet files are read one row group at a time.
func OpenFile(path string, spec *Spec) (*Reader, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err // *fs.PathError names the file
	}
	magic := make([]byte, 4)
	n, _ := io.ReadFull(f, magic)
	magic = magic[:n]
	if isXLSX(magic) || isParquet(magic) {
		st, err := f.Stat()
		if err != nil {
			f.Close()
			return nil, err
		}
		r, err := newReaderAt(f, st.Size(), magic, path, spec)
		if err != nil {
			f.Close()
			return nil, err
		}
		r.src = closeWith{r.src, f}
		return r, nil
	}
	if _, err := f.Seek(0, io.SeekStart); err != nil {
		f.Close()
		return nil, err
	}
	r, err := newCSVReader(f, path, spec)
	if err != nil {
		f.Close()
		return nil, err
	}
	r.src = closeWith{r.src, f}
	return r, nil
}

// closeWith closes a file after its source.
type closeWith struct {
	source
	f io.Closer
}

func (c closeWith) close() error {
	err := c.source.close()
	if e := c.f.Close(); err == nil {
		err = e
	}
	return err
}

func isXLSX(magic []byte) bool    { return bytes.HasPrefix(magic, []byte("PK\x03\x04")) }
func isParquet(magic []byte) bool { return bytes.HasPrefix(magic, []byte("PAR1")) }

func newCSVReader(r io.Reader, name string, spec *Spec) (*Reader, error) {
	p, err := prepareSpec(spec, name)
	if err != nil {
		return nil, err
	}
	if p.Sheet != "" {
		return nil, errAt(name, 0, ErrBadSpec, "a sheet (%q) is named but the file is not an Excel workbook", p.Sheet)
	}
	src, err := newCSVSource(r, name)
	if err != nil {
		return nil, err
	}
	header, line, delim, err := src.readHeader(p.Delimiter)
	if err != nil {
		return nil, err
	}
	return newReader(src, p, name, header, line, delim)
}

func newReaderAt(ra io.ReaderAt, size int64, magic []byte, name string, spec *Spec) (*Reader, error) {
	p, err := prepareSpec(spec, name)
	if err != nil {
		return nil, err
	}
	var (
		src    source
		header []string
	)
	if isXLSX(magic) {
		src, header, err = newXLSXSource(ra, size, name, p.Sheet)
	} else {
		if p.Sheet != "" {
			return nil, errAt(name, 0, ErrBadSpec, "a sheet (%q) is named but the file is a Parquet file", p.Sheet)
		}
		src, header, err = newParquetSource(ra, size, name)
	}
	if err != nil {
		return nil, err
	}
	r, err := newReader(src, p, name, header, 1, 0)
	if err != nil {
		src.close()
		return nil, err
	}
	return r, nil
}

func prepareSpec(spec *Spec, name string) (*prepared, error) {
	if spec == nil {
		spec = &Spec{}
	}
	return spec.prepare(name)
}

// newReader finds the columns, reads ahead to detect the decimal mark and
// to know that there is a data row.
func newReader(src source, p *prepared, name string, header []string, hdrLine int, delim rune) (*Reader, error) {
	if p.Look != nil {
		if err := p.look(header); err != nil {
			return nil, errAt(name, hdrLine, ErrColumn, "%s", err)
		}
	}
	cols, err := p.columns(header, name, hdrLine)
	if err != nil {
		return nil, err
	}
	r := &Reader{name: name, src: src, p: p, header: header, hdrLine: hdrLine, delim: delim}
	want := 1
	if p.Decimal == DecimalAuto {
		want = decimalSample
	}
	for len(r.buf) < want {
		rec, err := src.next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
		r.buf = append(r.buf, rec)
	}
	if len(r.buf) == 0 {
		return nil, errAt(name, hdrLine, ErrNoRows, "no data rows below the header")
	}
	switch p.Decimal {
	case DecimalComma:
		r.comma = true
	case DecimalAuto:
		// With a comma delimiter a decimal comma needs quotes: not a
		// way anyone writes numbers, so auto never switches there.
		r.comma = delim != ',' && commaNumbers(r.buf, cols, len(header))
	}
	r.rd = rowReader{p: p, cols: cols, header: header, comma: r.comma, src: src}
	if !p.KeepDuplicates {
		r.rd.seen = map[dupKey]int{}
		r.rd.seeds = [2]maphash.Seed{maphash.MakeSeed(), maphash.MakeSeed()}
	}
	return r, nil
}

// Header returns the header fields as written.
func (r *Reader) Header() []string { return r.header }

// StratumColumn returns the name of the stratum column read, "" for none.
func (r *Reader) StratumColumn() string { return r.p.Stratum }

// Name returns the file name used in messages.
func (r *Reader) Name() string { return r.name }

// Next returns the next data row in file order, with exactly one of
// Record.Row and Record.Excl set, or io.EOF after the last. Another error
// is a problem with the file as a whole (a read error, binary content).
func (r *Reader) Next() (Record, error) {
	var rec record
	if len(r.buf) > 0 {
		rec = r.buf[0]
		r.buf[0] = record{}
		r.buf = r.buf[1:]
	} else {
		var err error
		if rec, err = r.src.next(); err != nil {
			return Record{}, err
		}
	}
	r.total++
	if rec.quoteErr != "" {
		return Record{Line: rec.line, Excl: &Exclusion{Line: rec.line, Reason: ReasonQuotes, Detail: rec.quoteErr}}, nil
	}
	row, reason, detail := r.rd.row(&rec)
	if reason != 0 {
		return Record{Line: rec.line, Fields: rec.fields,
			Excl: &Exclusion{Line: rec.line, Reason: reason, Detail: detail, Fields: rec.fields}}, nil
	}
	return Record{Line: rec.line, Fields: rec.fields, Row: &row}, nil
}

// Close releases the file OpenFile opened; it is a no-op otherwise.
func (r *Reader) Close() error { return r.src.close() }

// table returns an empty Table describing the file being read.
func (r *Reader) table() *Table {
	return &Table{
		Name:         r.name,
		Header:       r.header,
		Delimiter:    r.delim,
		DecimalComma: r.comma,
		Stratum:      r.p.Stratum,
		hasWeight:    r.p.Weight != "",
		hasStratum:   r.p.Stratum != "",
		hasSubject:   r.p.Subject != "",
	}
}

// DateHint returns, once the rows are read, a note when the dates that
// could not be read would all read with day and month swapped; "" otherwise.
func (r *Reader) DateHint() string { return r.rd.dateHint() }

// commaNumbers reports whether the numeric cells of well-formed records
// mostly use a decimal comma: more cells look like 12,5 than like 12.5.
// Cells written the other way are excluded one by one as not a number.
func commaNumbers(recs []record, c colIndex, nf int) bool {
	nComma, nPoint := 0, 0
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
			switch {
			case looksPoint(s):
				nPoint++
			case looksComma(s):
				nComma++
			}
		}
	}
	return nComma > nPoint
}
