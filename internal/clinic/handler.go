package clinic

import (
	"embed"
	"fmt"
	"io"
	"io/fs"
	"net/http"
	"strings"
	"time"

	"growband/curve"
)

//go:embed assets
var assets embed.FS

// handler serves the page, the batch upload and the API.
type handler struct {
	cat   *catalog
	audit *auditLog
	log   io.Writer
	max   int64
	mux   *http.ServeMux

	batchSlots chan struct{} // one token per batch job running (maxBatchJobs)
}

// NewHandler returns the HTTP handler of the page and the API for the loaded
// references refs, named by names (the same length, names unique). Each
// reference must be ready for concurrent use, as curve.Load returns it.
// NewHandler panics on no references, mismatched lengths or a repeated name:
// those are programming mistakes. opt.Refs, Addr and AllowRemote are ignored.
func NewHandler(refs []*curve.Reference, names []string, opt Options) http.Handler {
	h := &handler{cat: newCatalog(refs, names), log: opt.Log, max: opt.maxBody(), mux: http.NewServeMux(),
		batchSlots: make(chan struct{}, maxBatchJobs)}
	if opt.Audit != nil {
		h.audit = &auditLog{w: opt.Audit, now: time.Now}
	}
	static, err := fs.Sub(assets, "assets")
	if err != nil {
		panic("clinic: embedded assets: " + err.Error())
	}
	h.mux.Handle("GET /assets/", http.StripPrefix("/assets/", http.FileServerFS(static)))
	h.mux.HandleFunc("/api/v1/score", h.handleScore)
	h.mux.HandleFunc("/api/v1/references", h.handleReferences)
	h.mux.HandleFunc("/api/v1/chart.svg", h.handleChart)
	h.mux.HandleFunc("/api/v1/batch", h.handleBatchAPI)
	h.mux.HandleFunc("/api/", func(w http.ResponseWriter, r *http.Request) {
		writeAPIError(w, http.StatusNotFound, "path", "no such endpoint: "+r.URL.Path)
	})
	h.mux.HandleFunc("/batch", h.handleBatchForm)
	h.mux.HandleFunc("GET /healthz", func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "text/plain; charset=utf-8")
		_, _ = io.WriteString(w, "ok\n")
	})
	h.mux.HandleFunc("/{$}", h.handlePage)
	return h
}

// contentPolicy allows nothing but this server's own styles, script, images
// and form targets: no inline script, nothing from elsewhere. Style
// attributes are allowed because the charts' SVG is styled with them.
const contentPolicy = "default-src 'none'; style-src 'self'; style-src-attr 'unsafe-inline'; script-src 'self'; img-src 'self' data:; " +
	"form-action 'self'; base-uri 'none'; frame-ancestors 'none'"

// securityHeaders go on every answer.
var securityHeaders = map[string][]string{
	"Content-Security-Policy": {contentPolicy},
	"X-Content-Type-Options":  {"nosniff"},
	"Referrer-Policy":         {"no-referrer"},
	"X-Frame-Options":         {"DENY"},
}

var noStore = []string{"no-store"}

func (h *handler) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	defer func() {
		v := recover()
		if v == nil {
			return
		}
		if v == http.ErrAbortHandler {
			panic(v)
		}
		// The panic value is not logged: it might hold a child's data.
		h.logf("internal error serving %s %s (recovered): %T", r.Method, r.URL.Path, v)
		if strings.HasPrefix(r.URL.Path, "/api/") {
			writeAPIError(w, http.StatusInternalServerError, "", "internal error")
			return
		}
		http.Error(w, "growband: internal error", http.StatusInternalServerError)
	}()
	// The keys are canonical already and the values shared and never
	// written, which spares a canonicalisation and an allocation each.
	hd := w.Header()
	for k, v := range securityHeaders {
		hd[k] = v
	}
	if !strings.HasPrefix(r.URL.Path, "/assets/") {
		// Pages and answers hold children's data: no caching anywhere.
		hd["Cache-Control"] = noStore
	}
	if r.Body != nil {
		r.Body = http.MaxBytesReader(w, r.Body, h.max)
	}
	h.mux.ServeHTTP(w, r)
}

func (h *handler) logf(format string, args ...any) {
	if h.log != nil {
		fmt.Fprintf(h.log, "growband: "+format+"\n", args...)
	}
}
