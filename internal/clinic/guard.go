package clinic

import (
	"errors"
	"io"
	"mime"
	"net"
	"net/http"
	"net/url"
	"os"
	"slices"
	"strconv"
	"strings"
)

// The checks below keep the page to the machine, and the people, it was
// started for. A browser on this machine also visits other sites, and those
// pages can send requests to 127.0.0.1: with a host name of their own that
// they make resolve to 127.0.0.1 (DNS rebinding), or by posting a form or a
// script request across origins (cross-site request forgery). The first is
// caught by the Host header, which names the attacker's host; the second by
// the Origin, Referer and Sec-Fetch-Site headers that browsers add and pages
// cannot forge. Clients that are not browsers (curl, scripts) send none of
// the latter and are let through.

// hostField and originField name the refused header in a JSON error.
const (
	hostField   = "Host"
	originField = "Origin"
	ctypeField  = "Content-Type"
)

// hostNames is the set of host names (lower case, without port) that
// requests may name besides the loopback names.
type hostNames map[string]bool

func newHostNames(names ...string) hostNames {
	hn := hostNames{}
	for _, n := range names {
		if n = hostOnly(n); n != "" {
			hn[n] = true
		}
	}
	return hn
}

// hostOnly returns the host name of a Host header or address, lower case,
// without the port and the brackets of an IPv6 literal.
func hostOnly(hostport string) string {
	h := strings.TrimSpace(hostport)
	if name, _, err := net.SplitHostPort(h); err == nil {
		h = name
	}
	return strings.ToLower(strings.TrimSuffix(strings.TrimPrefix(h, "["), "]"))
}

// allows reports whether a request naming host (a Host header) is for this
// server: a loopback name, or one of the names given.
func (hn hostNames) allows(host string) bool {
	name := hostOnly(host)
	return name != "" && (isLoopback(name) || hn[name])
}

// list is the names for messages, loopback names first.
func (hn hostNames) list() string {
	var more []string
	for n := range hn {
		if !isLoopback(n) {
			more = append(more, n)
		}
	}
	slices.Sort(more)
	return strings.Join(append([]string{"localhost", "127.0.0.1", "[::1]"}, more...), ", ")
}

// crossOrigin returns a reason when r changes state (any method but GET,
// HEAD and OPTIONS) and a browser says it comes from a page of another
// origin: Sec-Fetch-Site other than same-origin or none, an Origin that is
// not this Host (a "null" Origin included), or, with no Origin, a Referer
// whose host is not this Host. It returns "" for a request to let through.
func crossOrigin(r *http.Request) string {
	switch r.Method {
	case http.MethodGet, http.MethodHead, http.MethodOptions:
		return ""
	}
	switch site := r.Header.Get("Sec-Fetch-Site"); site {
	case "", "same-origin", "none":
	default:
		return "the browser says this request comes from a page of another site (" + strconv.Quote(site) + ")"
	}
	if o := r.Header.Get("Origin"); o != "" {
		if !sameHost(o, r.Host) {
			return "the request comes from a page of another origin, " + strconv.Quote(o)
		}
		return ""
	}
	if ref := r.Header.Get("Referer"); ref != "" && !sameHost(ref, r.Host) {
		return "the request comes from a page of another origin (by its Referer)"
	}
	return ""
}

// sameHost reports whether the URL u (an Origin or a Referer) names host,
// port included.
func sameHost(u, host string) bool {
	p, err := url.Parse(u)
	if err != nil || p.Host == "" || (p.Scheme != "http" && p.Scheme != "https") {
		return false
	}
	return strings.EqualFold(p.Host, host)
}

// isJSON reports whether a Content-Type header is application/json.
func isJSON(ctype string) bool {
	mt, _, err := mime.ParseMediaType(ctype)
	return err == nil && mt == "application/json"
}

// Errors of reading a request body. They replace the network's own errors,
// whose text holds socket addresses, and are shown to the client.
var (
	errSlowBody = errors.New("the request body arrived too slowly and the server stopped waiting; send it again")
	errBodyRead = errors.New("the request body could not be read (the connection failed); send it again")
)

// bodyReader turns the network errors of reading a request body into
// errSlowBody or errBodyRead; the limit of http.MaxBytesReader passes.
type bodyReader struct{ io.ReadCloser }

func (b bodyReader) Read(p []byte) (int, error) {
	n, err := b.ReadCloser.Read(p)
	if err == nil || err == io.EOF {
		return n, err
	}
	var mb *http.MaxBytesError
	var ne net.Error
	switch {
	case errors.As(err, &mb), errors.Is(err, errSlowBody), errors.Is(err, errBodyRead):
		return n, err
	case errors.Is(err, os.ErrDeadlineExceeded), errors.As(err, &ne) && ne.Timeout():
		return n, errSlowBody
	case errors.Is(err, io.ErrUnexpectedEOF):
		return n, err // a body shorter than announced: the client's mistake, no address in it
	}
	return n, errBodyRead
}

// bodyStatus is the status for an error of reading a body: 413 over the
// limit, 408 too slow, 0 for anything else.
func bodyStatus(err error) int {
	var mb *http.MaxBytesError
	switch {
	case errors.As(err, &mb):
		return http.StatusRequestEntityTooLarge
	case errors.Is(err, errSlowBody):
		return http.StatusRequestTimeout
	}
	return 0
}

// failStatus is the status of a request that failed on the server's side or
// the network's rather than on its content: 408 for a body too slow, 500
// for an audit log that could not be written, 0 for anything else.
func failStatus(err error) int {
	switch {
	case errors.Is(err, errSlowBody):
		return http.StatusRequestTimeout
	case errors.Is(err, errAudit):
		return http.StatusInternalServerError
	}
	return 0
}
