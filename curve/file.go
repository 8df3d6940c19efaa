package curve

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// FormatName is the value of the "format" field of every reference file.
const FormatName = "growband-reference"

// maxFileBytes bounds what Load reads: a reference holds a few hundred
// curves of a few dozen coefficients, far below this, so anything larger is
// not a reference file and is not read into memory whole.
const maxFileBytes = 64 << 20

// checksumPrefix names the hash in the checksum field, so a later version
// can change it without guessing.
const checksumPrefix = "sha256:"

// fileBody is the reference file: the Reference's fields followed by the
// checksum.
type fileBody struct {
	*Reference
	Checksum string `json:"checksum"`
}

// Save writes r to w as a reference file: indented JSON of the Reference
// fields (with "format" set to FormatName and "version" to FormatVersion)
// followed by a "checksum" field, "sha256:" and the hex SHA-256 of the
// compact encoding/json encoding of the same Reference. The checksum covers
// the content, not the layout, so re-indenting the file keeps it valid but
// changing any value does not. r itself is not modified. An invalid
// reference is refused with an error wrapping ErrInvalid (see Validate).
func Save(w io.Writer, r *Reference) error {
	if err := r.Validate(); err != nil {
		return err
	}
	c := *r
	c.Format, c.Version = FormatName, FormatVersion
	sum, err := checksum(&c)
	if err != nil {
		return err
	}
	out, err := json.MarshalIndent(fileBody{&c, sum}, "", "  ")
	if err != nil {
		return fmt.Errorf("curve: encoding reference: %w", err)
	}
	out = append(out, '\n')
	_, err = w.Write(out)
	return err
}

// checksum returns the checksum field for r.
func checksum(r *Reference) (string, error) {
	body, err := json.Marshal(r)
	if err != nil {
		return "", fmt.Errorf("curve: encoding reference: %w", err)
	}
	h := sha256.Sum256(body)
	return checksumPrefix + hex.EncodeToString(h[:]), nil
}

// Load reads a reference file written by Save and checks it whole before
// returning it ready for concurrent scoring. name labels the source in
// errors (a file name, or "stdin"). In the order checked, errors wrap:
//
//   - ErrMalformed: not valid JSON, truncated (the message gives the line,
//     column and byte offset), a field of the wrong type, a field this
//     version does not know, data after the reference, or no checksum;
//   - ErrNotReference: the "format" field is not FormatName;
//   - ErrVersion: the file's version is newer than FormatVersion (both are
//     named);
//   - ErrDamaged: the checksum does not match the content;
//   - ErrInvalid: the content fails Validate.
//
// Content that is not JSON but whose first line that is not a comment names
// the columns age, L, M and S is read as an LMS table by LoadLMSTable (with
// nil options) instead.
//
// Load never panics on bad input.
func Load(rd io.Reader, name string) (*Reference, error) {
	data, err := io.ReadAll(io.LimitReader(rd, maxFileBytes+1))
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if len(data) > maxFileBytes {
		return nil, fmt.Errorf("%s: %w: larger than %d bytes", name, ErrMalformed, maxFileBytes)
	}
	trimmed := bytes.TrimLeft(data, " \t\r\n")
	if len(trimmed) == 0 {
		return nil, fmt.Errorf("%s: %w: empty file", name, ErrMalformed)
	}
	if trimmed[0] != '{' {
		if looksLikeLMSTable(data) {
			return LoadLMSTable(bytes.NewReader(data), name, nil)
		}
		return nil, fmt.Errorf("%s: %w: does not start with a JSON object", name, ErrNotReference)
	}
	// Read the format and version first, leniently: a newer version may add
	// fields, and its user should hear "newer version", not "unknown field".
	var head struct {
		Format  *string `json:"format"`
		Version *int    `json:"version"`
	}
	if err := json.Unmarshal(data, &head); err != nil {
		return nil, jsonError(name, data, err)
	}
	switch {
	case head.Format == nil:
		return nil, fmt.Errorf("%s: %w: no \"format\" field", name, ErrNotReference)
	case *head.Format != FormatName:
		return nil, fmt.Errorf("%s: %w: format %q, want %q", name, ErrNotReference, *head.Format, FormatName)
	case head.Version == nil:
		return nil, fmt.Errorf("%s: %w: no \"version\" field", name, ErrMalformed)
	case *head.Version > FormatVersion:
		return nil, fmt.Errorf("%s: %w: the file is version %d, this program reads version %d and older", name, ErrVersion, *head.Version, FormatVersion)
	case *head.Version < 1:
		return nil, fmt.Errorf("%s: %w: version %d", name, ErrMalformed, *head.Version)
	}
	r := new(Reference)
	body := fileBody{Reference: r}
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&body); err != nil {
		return nil, jsonError(name, data, err)
	}
	if off := dec.InputOffset(); len(bytes.TrimSpace(data[off:])) != 0 {
		line, col := position(data, int(off))
		return nil, fmt.Errorf("%s:%d:%d: %w: data after the reference (byte %d)", name, line, col, ErrMalformed, off)
	}
	if body.Checksum == "" {
		return nil, fmt.Errorf("%s: %w: no checksum", name, ErrMalformed)
	}
	sum, err := checksum(r)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if body.Checksum != sum {
		return nil, fmt.Errorf("%s: %w: the content was changed after it was written", name, ErrDamaged)
	}
	if err := r.ready(); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return r, nil
}

// LoadFile is Load of the named file; a file named *.csv is read as an LMS
// table by LoadLMSTable with nil options, so every command that takes a
// reference file also takes a table.
func LoadFile(path string) (*Reference, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if strings.EqualFold(filepath.Ext(path), ".csv") {
		return LoadLMSTable(f, path, nil)
	}
	return Load(f, path)
}

// jsonError turns a decoding error into one wrapping ErrMalformed that says
// where in the file it happened.
func jsonError(name string, data []byte, err error) error {
	var syn *json.SyntaxError
	var typ *json.UnmarshalTypeError
	off := -1
	msg := err.Error()
	switch {
	case errors.As(err, &syn):
		off = int(syn.Offset)
		if off >= len(bytes.TrimRight(data, " \t\r\n")) {
			msg = "truncated: " + msg
		}
	case errors.Is(err, io.ErrUnexpectedEOF):
		off = len(data)
		msg = "truncated: unexpected end of the file"
	case errors.As(err, &typ):
		off = int(typ.Offset)
		msg = fmt.Sprintf("field %q: cannot hold JSON %s", typ.Field, typ.Value)
	default:
		msg = strings.TrimPrefix(msg, "json: ")
	}
	if off < 0 {
		return fmt.Errorf("%s: %w: %s", name, ErrMalformed, msg)
	}
	line, col := position(data, off)
	return fmt.Errorf("%s:%d:%d: %w: %s (byte %d)", name, line, col, ErrMalformed, msg, off)
}

// position returns the 1-based line and column of byte offset off.
func position(data []byte, off int) (line, col int) {
	off = min(max(off, 0), len(data))
	before := data[:off]
	line = 1 + bytes.Count(before, []byte{'\n'})
	col = 1 + off - (bytes.LastIndexByte(before, '\n') + 1)
	return line, col
}
