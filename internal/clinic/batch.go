package clinic

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"path"
	"slices"
	"strings"

	"growband/curve"
	"growband/internal/intake"
	"growband/internal/scorefile"
)

// fileField names the uploaded file in errors.
const fileField = "file"

// maxBatchJobs is how many batch uploads are read and scored at once. Each
// holds its body (up to the body limit) in memory while it is scored, so
// the limit bounds the server's memory; two matches the two cores of the
// machines a clinic server is sized for (common practice: one job a core).
// Uploads beyond it are answered 503 with Retry-After.
const maxBatchJobs = 2

// batchRetryAfter is the Retry-After of a refused batch upload, in seconds:
// about the time a batch of a few MB takes to score.
const batchRetryAfter = "5"

// auditBatch is how many scored rows of a batch are audited and written at
// once: one audit write per row would cost a system call each, and a batch
// bounds what is held.
const auditBatch = 1000

// batchJob is a batch file ready to score: its header is read and checked,
// so every file-level problem has been answered before the first byte of
// the scored file is written.
type batchJob struct {
	h   *handler
	ref int
	r   *curve.Reference
	rd  *intake.Reader
}

// takeSlot reserves one of the maxBatchJobs; false means all are busy.
func (h *handler) takeSlot() bool {
	select {
	case h.batchSlots <- struct{}{}:
		return true
	default:
		return false
	}
}

func (h *handler) freeSlot() { <-h.batchSlots }

// startBatch reads the header of the batch file data (named name in
// messages) with the reading options opt, by the rules of scorefile.Spec.
// Problems with the file as a whole are *inputError naming fileField, with
// the file's line, or the option's field.
func (h *handler) startBatch(name string, data []byte, ref int, opt *intake.Options) (*batchJob, error) {
	r := h.cat.refs[ref]
	spec := scorefile.Spec(r)
	if err := opt.Apply(spec); err != nil {
		return nil, fieldErr("birth-column", "%v", err)
	}
	rd, err := intake.NewReaderBytes(data, name, spec)
	if err != nil {
		var ie *intake.Error
		if errors.As(err, &ie) && errors.Is(err, intake.ErrBadSpec) && strings.Contains(ie.Msg, "sheet") {
			return nil, fieldErr("sheet", "%v", err)
		}
		return nil, fieldErr(fileField, "%v", err)
	}
	if err := scorefile.NeedStratumColumn(r, rd.Name(), rd.StratumColumn()); err != nil {
		rd.Close()
		return nil, fieldErr(fileField, "%v", err)
	}
	return &batchJob{h: h, ref: ref, r: r, rd: rd}, nil
}

// write scores the rows and writes the file back as `growband score --in`
// does: every row echoed with z, centile and flag added, a row that cannot
// be scored keeping empty z and centile and the reason in flag. Rows go out
// auditBatch at a time, each batch after its audit lines are written, so
// memory stays bounded whatever the number of rows. begin is called before
// the first byte is written (to set the answer's headers).
//
// A problem met before anything is written (the audit log cannot be
// written, a damaged workbook) is returned. One met after the answer has
// begun aborts the connection, so that a client never takes a truncated
// file for a whole one; the log says why.
func (j *batchJob) write(w io.Writer, begin func()) error {
	defer j.rd.Close()
	var (
		cw    *scorefile.CSVWriter
		rows  []scorefile.Row
		audit []result
	)
	fail := func(err error) error {
		if cw == nil {
			return err
		}
		j.h.logf("batch upload aborted after the answer began: %v", err)
		panic(http.ErrAbortHandler)
	}
	flush := func() error {
		if err := j.h.audit.record("batch", audit...); err != nil {
			return fail(err)
		}
		if cw == nil {
			begin()
			cw = scorefile.NewCSVWriter(w, j.rd.Header(), false)
		}
		for _, o := range rows {
			cw.Write(o)
		}
		rows, audit = rows[:0], audit[:0]
		return nil
	}
	for {
		rec, err := j.rd.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return fail(fieldErr(fileField, "%v", err))
		}
		o := scorefile.ScoreRecord(j.r, rec, nil)
		rows = append(rows, o)
		if o.OK && j.h.audit != nil {
			audit = append(audit, j.result(&o))
		}
		if len(rows) == auditBatch {
			if err := flush(); err != nil {
				return err
			}
		}
	}
	if err := flush(); err != nil {
		return err
	}
	if err := cw.Flush(); err != nil {
		return fail(err)
	}
	return nil
}

// result is a scored row as the audit log keeps it.
func (j *batchJob) result(o *scorefile.Row) result {
	z, c := o.Z, o.Centile
	res := result{Reference: j.h.cat.names[j.ref], Stratum: o.Stratum, Age: o.Age, AgeUnit: j.r.AgeUnit,
		Value: o.Value, Unit: j.r.Unit, Z: &z, Centile: &c, Flags: []string{}}
	if o.Flag != "" {
		res.Flags = strings.Split(o.Flag, ";")
	}
	return res
}

// readOptions reads the reading options from form or query values named
// as the command-line flags (intake.OptionNames).
func readOptions(v url.Values) (*intake.Options, error) {
	var o intake.Options
	for _, name := range intake.OptionNames {
		if !v.Has(name) {
			continue
		}
		if err := o.Set(name, v.Get(name)); err != nil {
			return nil, fieldErr(name, "%v", err)
		}
	}
	return &o, nil
}

// readBody reads a request body into memory, sized by Content-Length when
// the client sent one, so that the copy is made once.
func readBody(r *http.Request) ([]byte, error) {
	var b bytes.Buffer
	if n := r.ContentLength; n > 0 && n < 1<<40 {
		b.Grow(int(n) + bytes.MinRead) // ReadFrom wants MinRead spare bytes to stop
	}
	_, err := b.ReadFrom(r.Body)
	return b.Bytes(), err
}

// handleBatchAPI is POST /api/v1/batch?reference=NAME[&option=value...]
// with the file as the body; it answers the scored CSV.
func (h *handler) handleBatchAPI(w http.ResponseWriter, r *http.Request) {
	if !allow(w, r, http.MethodPost) {
		return
	}
	if !h.takeSlot() {
		w.Header().Set("Retry-After", batchRetryAfter)
		writeAPIError(w, http.StatusServiceUnavailable, "", "too many batch uploads at once; try again shortly")
		return
	}
	defer h.freeSlot()
	q := r.URL.Query()
	ref, err := h.cat.pick("reference", q.Get("reference"))
	if err != nil {
		writeInputError(w, err)
		return
	}
	opt, err := readOptions(q)
	if err != nil {
		writeInputError(w, err)
		return
	}
	data, err := readBody(r)
	if err != nil {
		writeInputError(w, err)
		return
	}
	job, err := h.startBatch("upload", data, ref, opt)
	if err != nil {
		writeInputError(w, err)
		return
	}
	err = job.write(w, func() { w.Header().Set("Content-Type", "text/csv; charset=utf-8") })
	if errors.Is(err, errAudit) {
		writeAuditError(w, err)
	} else if err != nil {
		writeInputError(w, err)
	}
}

// upload is the batch form as sent.
type upload struct {
	ref, name string
	data      []byte
	options   url.Values
}

// readUpload reads the batch form: its "ref" field, "file" part and
// reading options, kept in memory (never in temporary files), bounded by
// the body limit.
func readUpload(r *http.Request) (*upload, error) {
	u := &upload{options: url.Values{}}
	mr, err := r.MultipartReader()
	if err != nil {
		return u, fieldErr(fileField, "send the file with the upload form (multipart/form-data)")
	}
	for {
		p, err := mr.NextPart()
		if err == io.EOF {
			break
		}
		if err != nil {
			return u, err
		}
		var b bytes.Buffer
		if _, err := b.ReadFrom(p); err != nil {
			return u, err
		}
		switch name := p.FormName(); {
		case name == "ref":
			u.ref = b.String()
		case name == fileField:
			u.name, u.data = p.FileName(), b.Bytes()
		case slices.Contains(intake.OptionNames, name):
			u.options.Set(name, b.String())
		}
	}
	if u.name == "" && u.data == nil {
		return u, fieldErr(fileField, "choose a CSV file (or an Excel workbook or Parquet file) to upload")
	}
	return u, nil
}

// handleBatchForm is POST /batch from the page's upload form.
func (h *handler) handleBatchForm(w http.ResponseWriter, r *http.Request) {
	if r.Method != http.MethodPost {
		http.Redirect(w, r, "/#batch", http.StatusSeeOther)
		return
	}
	if !h.takeSlot() {
		w.Header().Set("Retry-After", batchRetryAfter)
		pd := h.newPage("")
		pd.BatchErr = "too many batch uploads at once; try again in a few seconds"
		h.render(w, http.StatusServiceUnavailable, pd)
		return
	}
	defer h.freeSlot()
	up, err := readUpload(r)
	pd := h.newPage(up.ref)
	if err != nil {
		h.renderBatchError(w, pd, err)
		return
	}
	ref, err := h.cat.pick("ref", up.ref)
	if err != nil {
		h.renderBatchError(w, pd, err)
		return
	}
	opt, err := readOptions(up.options)
	if err != nil {
		h.renderBatchError(w, pd, err)
		return
	}
	job, err := h.startBatch(uploadName(up.name), up.data, ref, opt)
	if err != nil {
		h.renderBatchError(w, pd, err)
		return
	}
	name := up.name
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
	err = job.write(w, func() {
		w.Header().Set("Content-Type", "text/csv; charset=utf-8")
		w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", base+"-scored.csv"))
	})
	if err != nil {
		h.renderBatchError(w, pd, err)
	}
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
