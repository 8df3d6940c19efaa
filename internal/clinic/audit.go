package clinic

import (
	"encoding/json"
	"io"
	"sync"
	"time"
)

// auditLog writes one JSON line per scored measurement when the operator
// asked for an audit trail; with a nil writer it records nothing, which is
// the default: the server keeps no children's data.
type auditLog struct {
	mu  sync.Mutex
	w   io.Writer
	now func() time.Time
}

// auditLine is one line of the audit log.
type auditLine struct {
	Time   string `json:"time"`
	Source string `json:"source"` // "api", "page", "batch" or "chart"
	result
}

func (a *auditLog) record(source string, rs ...result) {
	if a == nil || a.w == nil || len(rs) == 0 {
		return
	}
	now := a.now().UTC().Format(time.RFC3339)
	a.mu.Lock()
	defer a.mu.Unlock()
	enc := json.NewEncoder(a.w)
	for _, r := range rs {
		// An audit log that cannot be written is reported by Serve's
		// caller on close; scoring goes on.
		_ = enc.Encode(auditLine{Time: now, Source: source, result: r})
	}
}

func (a *auditLog) recordChart(ref, stratum string, pts []point) {
	if a == nil || a.w == nil {
		return
	}
	rs := make([]result, len(pts))
	for i, p := range pts {
		z := p.Z
		rs[i] = result{Reference: ref, Stratum: stratum, Age: p.Age, Value: p.Value, Z: &z, Flags: []string{}}
	}
	a.record("chart", rs...)
}
