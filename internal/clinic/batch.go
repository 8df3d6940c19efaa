package clinic

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"path"
	"strings"

	"growband/internal/intake"
	"growband/internal/scorefile"
)

// fileField names the uploaded file in errors.
const fileField = "file"

// scoreCSV scores every data row of the CSV file data (named name in
// messages) against reference ref and writes the file back as
// `growband score --in` does: read by intake with the rules of
// scorefile.Spec, every row echoed with z, centile and flag added, a row that
// cannot be scored keeping empty z and centile and the reason in flag.
// Problems with the file as a whole are *inputError naming fileField, with
// the file's line. It returns the scored rows as results, for the audit log.
func (h *handler) scoreCSV(w io.Writer, name string, data []byte, ref int) ([]result, error) {
	r := h.cat.refs[ref]
	t, err := intake.Read(bytes.NewReader(data), name, scorefile.Spec(r))
	if err != nil {
		return nil, fieldErr(fileField, "%v", err)
	}
	rows, err := scorefile.Score(r, t, nil)
	if err != nil {
		return nil, fieldErr(fileField, "%v", err)
	}
	if err := scorefile.WriteCSV(w, t.Header, rows); err != nil {
		return nil, err
	}
	var scored []result
	for _, o := range rows {
		if !o.OK {
			continue
		}
		z, c := o.Z, o.Centile
		res := result{Reference: h.cat.names[ref], Stratum: o.Stratum, Age: o.Age, AgeUnit: r.AgeUnit,
			Value: o.Value, Unit: r.Unit, Z: &z, Centile: &c, Flags: []string{}}
		if o.Flag != "" {
			res.Flags = strings.Split(o.Flag, ";")
		}
		scored = append(scored, res)
	}
	return scored, nil
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
	res, err := h.scoreCSV(&buf, "upload", data, ref)
	if err != nil {
		writeInputError(w, err)
		return
	}
	if err := h.audit.record("batch", res...); err != nil {
		writeAuditError(w, err)
		return
	}
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
	res, err := h.scoreCSV(&buf, uploadName(name), data, ref)
	if err != nil {
		h.renderBatchError(w, pd, err)
		return
	}
	if err := h.audit.record("batch", res...); err != nil {
		h.renderBatchError(w, pd, err)
		return
	}
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

// uploadName is the uploaded file's base name for messages, "upload" when
// the browser sent none.
func uploadName(name string) string {
	if b := path.Base(strings.ReplaceAll(name, `\`, "/")); b != "." && b != "/" && b != "" {
		return b
	}
	return "upload"
}

func (h *handler) renderBatchError(w http.ResponseWriter, pd *pageData, err error) {
	status := http.StatusBadRequest
	var mb *http.MaxBytesError
	var ie *inputError
	switch {
	case errors.As(err, &mb):
		status = http.StatusRequestEntityTooLarge
		pd.BatchErr = fmt.Sprintf("the file is larger than the limit of %d MB", mb.Limit>>20)
	case failStatus(err) != 0:
		status, pd.BatchErr = failStatus(err), err.Error()
	case errors.As(err, &ie):
		pd.BatchErr = ie.Msg
	default:
		pd.BatchErr = err.Error()
	}
	h.render(w, status, pd)
}
