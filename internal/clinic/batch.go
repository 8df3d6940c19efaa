package clinic

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"path"
	"strconv"
	"strings"
	"unicode/utf8"
)

// Header names recognised in a batch file, compared after trimming spaces and
// ignoring case. Other columns are copied through unchanged.
var (
	ageNames      = []string{"age"}
	birthNames    = []string{"birth", "birth_date", "date_of_birth", "dob"}
	measuredNames = []string{"measured", "visit", "visit_date", "date_measured"}
	valueNames    = []string{"value"}
	stratumNames_ = []string{"stratum", "sex", "group"}
)

// batchColumns are the columns added to a scored batch file.
var batchColumns = []string{"age_used", "z", "centile", "flags", "note"}

// fileField names the uploaded file in errors.
const fileField = "file"

// scoreCSV scores every data row of the CSV file data against reference ref
// and writes the file back with batchColumns appended; a row that cannot be
// scored keeps empty z and centile, the flag "unscored" and the reason in the
// note. Problems with the file as a whole are *inputError naming fileField.
func (h *handler) scoreCSV(w io.Writer, data []byte, ref int) ([]result, error) {
	data = bytes.TrimPrefix(data, []byte("\ufeff"))
	if len(bytes.TrimSpace(data)) == 0 {
		return nil, fieldErr(fileField, "the file is empty")
	}
	if !utf8.Valid(data) || bytes.IndexByte(data, 0) >= 0 {
		return nil, fieldErr(fileField, "the file is not UTF-8 text; save it as CSV")
	}
	delim := detectDelimiter(data)
	rd := csv.NewReader(bytes.NewReader(data))
	rd.Comma = delim
	rd.FieldsPerRecord = -1
	header, err := rd.Read()
	if err != nil {
		return nil, fieldErr(fileField, "cannot read the header line: %v", err)
	}
	col := func(names []string) int {
		for i, hname := range header {
			for _, n := range names {
				if strings.EqualFold(strings.TrimSpace(hname), n) {
					return i
				}
			}
		}
		return -1
	}
	iAge, iBirth, iMeas, iVal, iStr := col(ageNames), col(birthNames), col(measuredNames), col(valueNames), col(stratumNames_)
	have := strings.Join(header, ", ")
	if iVal < 0 {
		return nil, fieldErr(fileField, "no value column (have: %s)", have)
	}
	if iAge < 0 && (iBirth < 0 || iMeas < 0) {
		return nil, fieldErr(fileField, "need an age column, or birth and measured date columns (have: %s)", have)
	}
	r := h.cat.refs[ref]
	if iStr < 0 && len(r.Strata) > 1 {
		return nil, fieldErr(fileField, "reference %s has strata %s: the file needs a stratum column (have: %s)",
			h.cat.names[ref], strings.Join(stratumNames(r), ", "), have)
	}
	out := csv.NewWriter(w)
	if err := out.Write(append(append([]string{}, header...), batchColumns...)); err != nil {
		return nil, err
	}
	cell := func(rec []string, i int) string {
		if i < 0 || i >= len(rec) {
			return ""
		}
		return strings.TrimSpace(rec[i])
	}
	var scored []result
	for {
		rec, err := rd.Read()
		if err == io.EOF {
			break
		}
		var pe *csv.ParseError
		if err != nil && !(errors.As(err, &pe) && errors.Is(pe.Err, csv.ErrFieldCount)) {
			return nil, fieldErr(fileField, "%v", err)
		}
		if len(rec) == 1 && strings.TrimSpace(rec[0]) == "" {
			continue // blank line
		}
		m := &measurement{Reference: h.cat.names[ref], Stratum: cell(rec, iStr)}
		f := fields{Reference: "reference", Stratum: "stratum", Age: "age", Birth: "birth", Measured: "measured", Value: "value"}
		var res result
		perr := func() error {
			if a := cell(rec, iAge); a != "" {
				v, err := parseNumber("age", a)
				if err != nil {
					return err
				}
				m.HasAge, m.Age = true, v
			} else {
				m.Birth, m.Measured = cell(rec, iBirth), cell(rec, iMeas)
				if m.Birth == "" || m.Measured == "" {
					return fieldErr("age", "missing: no age, and no birth and measured dates")
				}
			}
			v := cell(rec, iVal)
			if v == "" {
				return fieldErr("value", "missing value")
			}
			x, err := parseNumber("value", v)
			if err != nil {
				return err
			}
			m.Value = x
			res, err = h.cat.score(m, f)
			return err
		}()
		row := append(append([]string{}, rec...), make([]string, len(batchColumns))...)
		tail := row[len(rec):]
		if perr != nil {
			tail[3] = "unscored"
			tail[4] = perr.Error()
		} else {
			tail[0] = strconv.FormatFloat(res.Age, 'f', 4, 64)
			if res.Z != nil {
				tail[1] = strconv.FormatFloat(*res.Z, 'f', 4, 64)
				tail[2] = strconv.FormatFloat(*res.Centile, 'f', 2, 64)
			}
			tail[3] = strings.Join(res.Flags, ";")
			tail[4] = res.Note
			scored = append(scored, res)
		}
		if err := out.Write(row); err != nil {
			return nil, err
		}
	}
	out.Flush()
	return scored, out.Error()
}

// detectDelimiter returns the most frequent of comma, semicolon and tab on
// the first line outside quotes; comma when there is none.
func detectDelimiter(data []byte) rune {
	line := data
	if i := bytes.IndexByte(line, '\n'); i >= 0 {
		line = line[:i]
	}
	counts := map[rune]int{}
	quoted := false
	for _, c := range string(line) {
		switch {
		case c == '"':
			quoted = !quoted
		case !quoted && (c == ',' || c == ';' || c == '\t'):
			counts[c]++
		}
	}
	best := ','
	for _, c := range []rune{';', '\t'} {
		if counts[c] > counts[best] {
			best = c
		}
	}
	return best
}

// handleBatchAPI is POST /api/v1/batch?reference=NAME with a CSV body;
// it answers the scored CSV.
func (h *handler) handleBatchAPI(w http.ResponseWriter, r *http.Request) {
	if !allow(w, r, http.MethodPost) {
		return
	}
	ref, err := h.cat.pick("reference", r.URL.Query().Get("reference"))
	if err != nil {
		writeInputError(w, err)
		return
	}
	data, err := io.ReadAll(r.Body)
	if err != nil {
		writeInputError(w, err)
		return
	}
	var buf bytes.Buffer
	res, err := h.scoreCSV(&buf, data, ref)
	if err != nil {
		writeInputError(w, err)
		return
	}
	h.audit.record("batch", res...)
	w.Header().Set("Content-Type", "text/csv; charset=utf-8")
	_, _ = w.Write(buf.Bytes())
}

// readUpload reads the batch form: its "ref" field and "file" part, kept in
// memory (never in temporary files), bounded by the body limit.
func readUpload(r *http.Request) (ref, name string, data []byte, err error) {
	mr, err := r.MultipartReader()
	if err != nil {
		return "", "", nil, fieldErr(fileField, "send the file with the upload form (multipart/form-data)")
	}
	for {
		var p *multipart.Part
		p, err = mr.NextPart()
		if err == io.EOF {
			break
		}
		if err != nil {
			return "", "", nil, err
		}
		b, err := io.ReadAll(p)
		if err != nil {
			return "", "", nil, err
		}
		switch p.FormName() {
		case "ref":
			ref = string(b)
		case fileField:
			name, data = p.FileName(), b
		}
	}
	if name == "" && data == nil {
		return ref, "", nil, fieldErr(fileField, "choose a CSV file to upload")
	}
	return ref, name, data, nil
}

// handleBatchForm is POST /batch from the page's upload form.
func (h *handler) handleBatchForm(w http.ResponseWriter, r *http.Request) {
	if r.Method != http.MethodPost {
		http.Redirect(w, r, "/#batch", http.StatusSeeOther)
		return
	}
	refName, name, data, err := readUpload(r)
	pd := h.newPage(refName)
	if err != nil {
		h.renderBatchError(w, pd, err)
		return
	}
	ref, err := h.cat.pick("ref", refName)
	if err != nil {
		h.renderBatchError(w, pd, err)
		return
	}
	var buf bytes.Buffer
	res, err := h.scoreCSV(&buf, data, ref)
	if err != nil {
		h.renderBatchError(w, pd, err)
		return
	}
	h.audit.record("batch", res...)
	base := strings.TrimSuffix(path.Base(strings.ReplaceAll(name, `\`, "/")), path.Ext(name))
	base = strings.Map(func(c rune) rune {
		if c < 0x80 && (c == '-' || c == '_' || c == '.' || c >= '0' && c <= '9' || c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z') {
			return c
		}
		return '_'
	}, base)
	if base == "" || base == "." || base == "_" {
		base = "batch"
	}
	w.Header().Set("Content-Type", "text/csv; charset=utf-8")
	w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", base+"-scored.csv"))
	_, _ = w.Write(buf.Bytes())
}

func (h *handler) renderBatchError(w http.ResponseWriter, pd *pageData, err error) {
	status := http.StatusBadRequest
	var mb *http.MaxBytesError
	var ie *inputError
	switch {
	case errors.As(err, &mb):
		status = http.StatusRequestEntityTooLarge
		pd.BatchErr = fmt.Sprintf("the file is larger than the limit of %d MB", mb.Limit>>20)
	case errors.As(err, &ie):
		pd.BatchErr = ie.Msg
	default:
		pd.BatchErr = err.Error()
	}
	h.render(w, status, pd)
}
