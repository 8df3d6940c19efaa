package clinic

import (
	"io"
	"strings"
	"time"
)

// DefaultAddr is the address Serve listens on when Options.Addr is empty:
// the loopback interface only, so the page is reachable from this machine
// alone.
const DefaultAddr = "127.0.0.1:8750"

// DefaultMaxBody is the largest request body accepted, 10 MB: room for a
// batch file of some hundred thousand rows, small enough to hold in memory.
const DefaultMaxBody = 10 << 20

// Server timeouts. A page or a batch of a few MB is read and answered well
// within them on a clinic network; they bound what a stalled or hostile
// client can hold.
const (
	readHeaderTimeout = 10 * time.Second
	readTimeout       = 60 * time.Second
	writeTimeout      = 120 * time.Second
	idleTimeout       = 120 * time.Second
	shutdownTimeout   = 10 * time.Second
)

// Options configure Serve and NewHandler. The zero value means the documented
// defaults.
type Options struct {
	// Refs are the reference files Serve loads (Serve only; NewHandler takes
	// loaded references). Each is named by its file name without the
	// extension.
	Refs []string
	// Addr is the listen address; "" means DefaultAddr. Requests may name
	// its host in their Host header.
	Addr string
	// AllowRemote permits a non-loopback listen address. Without it Serve
	// refuses one.
	AllowRemote bool
	// Hosts are the host names (or addresses) that requests from other
	// machines may name in their Host header, besides the loopback names and
	// the host of Addr; requests naming any other host are refused, which
	// defeats DNS rebinding.
	Hosts []string
	// Audit, when not nil, receives one JSON line per scored measurement
	// (children's data). nil keeps nothing. A request whose lines cannot be
	// written fails with 500 and its results are not shown.
	Audit io.Writer
	// AuditName names the audit log in messages (a file name, never a
	// path); "" means "the audit log".
	AuditName string
	// Log receives the server's messages, "growband: ..."; they never hold
	// measurements. nil means silence.
	Log io.Writer
	// MaxBody is the largest request body in bytes; 0 means DefaultMaxBody.
	MaxBody int64

	// files are the reference files Serve loaded, shown by base name.
	files []string
}

func (o *Options) auditName() string {
	if strings.TrimSpace(o.AuditName) == "" {
		return "the audit log"
	}
	return "the audit log " + o.AuditName
}

func (o *Options) maxBody() int64 {
	if o.MaxBody <= 0 {
		return DefaultMaxBody
	}
	return o.MaxBody
}

func (o *Options) addr() string {
	if o.Addr == "" {
		return DefaultAddr
	}
	return o.Addr
}
