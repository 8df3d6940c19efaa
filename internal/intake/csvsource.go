package intake

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"time"
	"unicode/utf8"
)

// A quoted field may hold line breaks (RFC 4180), but a stray quote would
// then swallow the rest of the file. A field still open after this many
// lines, or bytes, is taken for a stray quote: its first line is listed as
// a damaged row and reading goes on with the next line. A free-text note of
// more lines than this in one cell of a measurement file is not expected
// (common practice).
const (
	maxQuotedLines = 100
	maxQuotedBytes = 1 << 20
)

// maxShown is how many bytes of a damaged row its reason shows.
const maxShown = 200

// csvSource reads the records of a delimited text file one at a time.
type csvSource struct {
	name  string
	br    *bufio.Reader
	delim byte
	line  int        // physical lines consumed from br
	back  []physLine // lines read ahead and given back, in file order
	nf    int        // header field count; 0 while reading the header
}

type physLine struct {
	text []byte // without the line ending
	num  int    // 1-based line number
}

// newCSVSource checks the start of r for a byte-order mark and UTF-16 and
// returns a source positioned at the first byte of text.
func newCSVSource(r io.Reader, name string) (*csvSource, error) {
	br := bufio.NewReaderSize(r, 64<<10)
	head, _ := br.Peek(3)
	switch {
	case bytes.HasPrefix(head, []byte{0xFF, 0xFE}) || bytes.HasPrefix(head, []byte{0xFE, 0xFF}):
		return nil, errAt(name, 1, ErrBinary, "file is UTF-16 text; save it as UTF-8 CSV")
	case bytes.HasPrefix(head, []byte{0xEF, 0xBB, 0xBF}):
		_, _ = br.Discard(3)
	}
	return &csvSource{name: name, br: br}, nil
}

// rawLine returns the next physical line without its line ending; the
// slice is valid until the next call. It returns io.EOF at the end.
func (s *csvSource) rawLine() (physLine, error) {
	if len(s.back) > 0 {
		l := s.back[0]
		s.back = s.back[1:]
		return l, nil
	}
	b, err := s.br.ReadSlice('\n')
	if errors.Is(err, bufio.ErrBufferFull) {
		long := append([]byte(nil), b...)
		for errors.Is(err, bufio.ErrBufferFull) {
			b, err = s.br.ReadSlice('\n')
			long = append(long, b...)
		}
		b = long
	}
	if err != nil && err != io.EOF {
		return physLine{}, fmt.Errorf("%s: %w", s.name, err)
	}
	if len(b) == 0 && err == io.EOF {
		return physLine{}, io.EOF
	}
	s.line++
	b = bytes.TrimSuffix(b, []byte{'\n'})
	b = bytes.TrimSuffix(b, []byte{'\r'})
	if i := bytes.IndexByte(b, 0); i >= 0 {
		return physLine{}, errAt(s.name, s.line, ErrBinary, "NUL byte: binary content, not a CSV text file (a spreadsheet or UTF-16 file?)")
	}
	return physLine{text: b, num: s.line}, nil
}

// firstLine returns the next line that is not blank (empty or only
// white space).
func (s *csvSource) firstLine() (physLine, error) {
	for {
		l, err := s.rawLine()
		if err != nil || len(bytes.TrimSpace(l.text)) > 0 {
			return l, err
		}
	}
}

// readHeader reads the header line, detecting the delimiter when delim is 0.
func (s *csvSource) readHeader(delim rune) ([]string, int, rune, error) {
	first, err := s.firstLine()
	if err == io.EOF {
		return nil, 0, 0, errAt(s.name, 0, ErrEmpty, "file is empty")
	}
	if err != nil {
		return nil, 0, 0, err
	}
	if off := firstInvalidUTF8(first.text); off >= 0 {
		return nil, 0, 0, errAt(s.name, first.num, ErrBinary, "header is not UTF-8 text (invalid byte 0x%02x at column %d); save the file as UTF-8",
			first.text[off], off+1)
	}
	if delim == 0 {
		delim = detectDelimiter(first.text)
	}
	s.delim = byte(delim)
	rec, err := s.record(first)
	if err != nil {
		return nil, 0, 0, err
	}
	if rec.quoteErr != "" {
		return nil, 0, 0, errAt(s.name, first.num, ErrHeader, "header row: %s", rec.quoteErr)
	}
	s.nf = len(rec.fields)
	return rec.fields, first.num, delim, nil
}

func (s *csvSource) next() (record, error) {
	first, err := s.firstLine()
	if err != nil {
		return record{}, err
	}
	return s.record(first)
}

// record splits the record starting on line first. A quoted field that
// runs past the end of its line is followed onto the next lines; when the
// record that results breaks the row's shape (its field count differs from
// the header's, or the quoting is wrong, or the field never closes), the
// first line alone is a damaged row and the lines after it are read again.
func (s *csvSource) record(first physLine) (record, error) {
	fields, _, more, bad := splitRecord([][]byte{first.text}, s.delim)
	if !more {
		if bad != "" {
			return record{line: first.num, quoteErr: bad + ": " + shown(first.text)}, nil
		}
		return record{line: first.num, fields: fields}, nil
	}
	lines := [][]byte{append([]byte(nil), first.text...)}
	ahead := []physLine{}
	size := len(first.text)
	why := ""
	for {
		l, err := s.rawLine()
		if err == io.EOF {
			why = "quoted field is not closed before the end of the file"
			break
		}
		if err != nil {
			return record{}, err
		}
		l.text = append([]byte(nil), l.text...)
		ahead = append(ahead, l)
		lines = append(lines, l.text)
		size += len(l.text)
		fields, _, more, bad = splitRecord(lines, s.delim)
		if more {
			if len(lines) >= maxQuotedLines || size > maxQuotedBytes {
				why = fmt.Sprintf("quoted field is still open after %d lines", len(lines))
				break
			}
			continue
		}
		switch {
		case bad != "":
			why = "quoted field runs past the end of its line and then " + bad
		case s.nf > 0 && len(fields) != s.nf:
			why = fmt.Sprintf("quoted field runs past the end of its line, giving a row of %d fields (header has %d)", len(fields), s.nf)
		default:
			return record{line: first.num, fields: fields}, nil
		}
		break
	}
	s.back = append(ahead, s.back...)
	return record{line: first.num, quoteErr: why + ": " + shown(first.text)}, nil
}

// splitRecord splits a record held in lines (RFC 4180: fields separated by
// delim, a field in double quotes may hold delim, line breaks and doubled
// quotes). more reports a quoted field still open at the end of the last
// line; bad describes misplaced quotes. used is the number of lines the
// record took.
func splitRecord(lines [][]byte, delim byte) (fields []string, used int, more bool, bad string) {
	i, pos := 0, 0
	line := lines[0]
	var b []byte
	for {
		if pos < len(line) && line[pos] == '"' {
			pos++
			b = b[:0]
			for {
				j := bytes.IndexByte(line[pos:], '"')
				if j < 0 {
					b = append(b, line[pos:]...)
					b = append(b, '\n')
					i++
					if i == len(lines) {
						return nil, i, true, ""
					}
					line, pos = lines[i], 0
					continue
				}
				b = append(b, line[pos:pos+j]...)
				pos += j + 1
				if pos < len(line) && line[pos] == '"' {
					b = append(b, '"')
					pos++
					continue
				}
				break
			}
			fields = append(fields, string(b))
			if pos == len(line) {
				return fields, i + 1, false, ""
			}
			if line[pos] != delim {
				return nil, i + 1, false, fmt.Sprintf("extraneous %q after a closing quote", line[pos])
			}
			pos++
			continue
		}
		j := bytes.IndexByte(line[pos:], delim)
		f := line[pos:]
		if j >= 0 {
			f = line[pos : pos+j]
		}
		if bytes.IndexByte(f, '"') >= 0 {
			return nil, i + 1, false, `bare " in a field that does not start with a quote`
		}
		fields = append(fields, string(f))
		if j < 0 {
			return fields, i + 1, false, ""
		}
		pos += j + 1
	}
}

// shown is a damaged line as shown in its reason, trimmed to a readable
// length.
func shown(b []byte) string {
	s := string(b)
	if len(s) > maxShown {
		n := maxShown
		for n > 0 && !utf8.RuneStart(s[n]) {
			n--
		}
		s = s[:n] + "..."
	}
	return s
}

func (s *csvSource) dateCell(int, string) (time.Time, bool) { return time.Time{}, false }
func (s *csvSource) close() error                           { return nil }
