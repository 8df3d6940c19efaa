package clinic

import (
	"embed"
	"fmt"
	"io"
	"io/fs"
	"net/http"
	"strconv"
	"strings"
	"time"

	"growband/curve"
)

// assets are the files served under /assets/; templates are never served.
//
//go:embed assets
var assets embed.FS

//go:embed templates
var templates embed.FS

// handler serves the page, the batch upload and the API.
type handler struct {
	cat    *catalog
	audit  *auditLog
	log    io.Writer
	max    int64
	hosts  hostNames
	static fs.FS
	mux    *http.ServeMux

	batchSlots chan struct{} // one token per batch job running (maxBatchJobs)
}

// NewHandler returns the HTTP handler of the page and the API for the loaded
// references refs, named by names (the same length, names unique). Each
// reference must be ready for concurrent use, as curve.Load returns it.
// NewHandler panics on no references, mismatched lengths or a repeated name:
// those are programming mistakes. opt.Refs and AllowRemote are ignored.
//
// The handler answers requests whose Host names a loopback name
// (localhost, 127.0.0.1, [::1]), the host of opt.Addr or one of opt.Hosts,
// and refuses others with 421; it refuses with 403 a POST that a browser
// says comes from a page of another origin.
func NewHandler(refs []*curve.Reference, names []string, opt Options) http.Handler {
	h := &handler{cat: newCatalog(refs, names), log: opt.Log, max: opt.maxBody(), mux: http.NewServeMux(),
		hosts: newHostNames(append([]string{opt.Addr}, opt.Hosts...)...), batchSlots: make(chan struct{}, maxBatchJobs)}
	h.cat.files = opt.files
	if opt.Audit != nil {
		h.audit = &auditLog{w: opt.Audit, name: opt.auditName(), log: h.logf, now: time.Now}
	}
	static, err := fs.Sub(assets, "assets")
	if err != nil {
		panic("clinic: embedded assets: " + err.Error())
	}
	h.static = static
	h.mux.HandleFunc("GET /assets/{name}", h.handleAsset)
	h.mux.HandleFunc("/assets/", func(w http.ResponseWriter, r *http.Request) {
		http.Error(w, "growband: not found", http.StatusNotFound)
	})
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
	// same-origin, not no-referrer: with no-referrer a browser sends
	// "Origin: null" on the page's own form posts, which crossOrigin refuses.
	"Referrer-Policy": {"same-origin"},
	"X-Frame-Options": {"DENY"},
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
	if !h.hosts.allows(r.Host) {
		writeAPIError(w, http.StatusMisdirectedRequest, hostField, "this server answers requests for "+h.hosts.list()+
			" only, not for "+strconv.Quote(r.Host)+"; a server reachable from other machines names its host names when started")
		return
	}
	if why := crossOrigin(r); why != "" {
		writeAPIError(w, http.StatusForbidden, originField, why+"; pages of other origins may not send data here")
		return
	}
	if r.Body != nil {
		r.Body = bodyReader{http.MaxBytesReader(w, r.Body, h.max)}
	}
	h.mux.ServeHTTP(w, r)
}

// handleAsset serves one embedded file of /assets/: no directory listing,
// and nothing else than those files.
func (h *handler) handleAsset(w http.ResponseWriter, r *http.Request) {
	name := r.PathValue("name")
	if fi, err := fs.Stat(h.static, name); err != nil || !fi.Mode().IsRegular() {
		http.Error(w, "growband: not found", http.StatusNotFound)
		return
	}
	http.ServeFileFS(w, r, h.static, name)
}

func (h *handler) logf(format string, args ...any) {
	if h.log != nil {
		fmt.Fprintf(h.log, "growband: "+format+"\n", args...)
	}
}
