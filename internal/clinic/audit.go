package clinic

import (
	"bytes"
	"encoding/json"
	"errors"
	"io"
	"net/http"
	"strings"
	"sync"
	"time"
)

// auditLog writes one JSON line per scored measurement when the operator
// asked for an audit trail; with a nil writer it records nothing, which is
// the default: the server keeps no children's data.
type auditLog struct {
	mu   sync.Mutex
	w    io.Writer
	name string               // "the audit log NAME", for messages
	log  func(string, ...any) // the server's messages
	now  func() time.Time
}

// errAudit is the failure of an audit-log write. The request fails with it:
// an audit trail that silently loses lines is no audit trail.
var errAudit = errors.New("audit log not written")

// auditLine is one line of the audit log.
type auditLine struct {
	Time   string `json:"time"`
	Source string `json:"source"` // "api", "page", "batch" or "chart"
	result
}

// record writes the lines of rs in one write, so that a failed write leaves
// no partial request behind in most cases. A failure is reported on the
// server's log with its cause and returned as errAudit, whose text names the
// log by its file name only.
func (a *auditLog) record(source string, rs ...result) error {
	if a == nil || a.w == nil || len(rs) == 0 {
		return nil
	}
	now := a.now().UTC().Format(time.RFC3339)
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	for _, r := range rs {
		if err := enc.Encode(auditLine{Time: now, Source: source, result: r}); err != nil {
			panic("clinic: audit line: " + err.Error()) // plain data always encodes
		}
	}
	a.mu.Lock()
	_, err := a.w.Write(buf.Bytes())
	a.mu.Unlock()
	if err != nil {
		if a.log != nil {
			a.log("%s could not be written (%v); the request failed", a.name, err)
		}
		return &auditError{name: a.name}
	}
	return nil
}

func (a *auditLog) recordChart(ref, stratum string, pts []point) error {
	if a == nil || a.w == nil {
		return nil
	}
	rs := make([]result, len(pts))
	for i, p := range pts {
		z := p.Z
		rs[i] = result{Reference: ref, Stratum: stratum, Age: p.Age, Value: p.Value, Z: &z, Flags: []string{}}
	}
	return a.record("chart", rs...)
}

// auditError is errAudit with the log's name for the client.
type auditError struct{ name string }

func (e *auditError) Error() string {
	return strings.TrimPrefix(e.name, "the ") + " could not be written, so the result is not shown; " +
		"the server's operator is told why"
}

func (e *auditError) Unwrap() error { return errAudit }

// writeAuditError answers an audit-log failure on the API.
func writeAuditError(w http.ResponseWriter, err error) {
	writeAPIError(w, http.StatusInternalServerError, "audit-log", err.Error())
}
