package clinic

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log"
	"net"
	"net/http"
	"path/filepath"
	"slices"
	"strings"

	"growband/curve"
)

// Serve loads opt.Refs and serves the page and the API on opt.Addr until ctx
// is done, then shuts down gracefully: requests in progress get up to 10 s to
// finish. It refuses a non-loopback address unless opt.AllowRemote is set,
// and warns on opt.Log when it is. Requests must name in their Host header a
// loopback name, the listening address (any address of this machine when
// listening on all interfaces) or one of opt.Hosts (see NewHandler).
// Errors wrap ErrReferences (no reference, one that cannot be loaded, two
// with the same name), ErrRemote or ErrAddr; a nil error means a clean
// shutdown.
func Serve(ctx context.Context, opt Options) error {
	refs, names, err := loadRefs(opt.Refs)
	if err != nil {
		return err
	}
	addr := opt.addr()
	host, _, err := net.SplitHostPort(addr)
	if err != nil {
		return fmt.Errorf("%w: %q: %v", ErrAddr, addr, err)
	}
	lg := opt.Log
	if lg == nil {
		lg = io.Discard
	}
	if !isLoopback(host) {
		if !opt.AllowRemote {
			return fmt.Errorf("%w: %s is not a loopback address; the page has no login and no encryption, "+
				"so allow other machines explicitly if that is really wanted", ErrRemote, addr)
		}
		fmt.Fprintf(lg, "growband: warning: listening on %s, reachable from other machines: "+
			"the page has no login and no encryption; use it only on a trusted network\n", addr)
		if len(opt.Hosts) == 0 {
			fmt.Fprintf(lg, "growband: other machines must address the server by an IP address: "+
				"no host name was given for them\n")
		}
	}
	ln, err := net.Listen("tcp", addr)
	if err != nil {
		return fmt.Errorf("%w: %v", ErrAddr, err)
	}
	opt.Hosts = append(slices.Clone(opt.Hosts), ln.Addr().String())
	if ip := net.ParseIP(host); host == "" || ip != nil && ip.IsUnspecified() {
		// Listening on every interface: each of this machine's addresses
		// names it. An address, unlike a name, cannot be rebound.
		opt.Hosts = append(opt.Hosts, interfaceAddrs()...)
	}
	opt.files = opt.Refs
	srv := &http.Server{
		Handler:           NewHandler(refs, names, opt),
		ReadHeaderTimeout: readHeaderTimeout,
		ReadTimeout:       readTimeout,
		WriteTimeout:      writeTimeout,
		IdleTimeout:       idleTimeout,
		MaxHeaderBytes:    1 << 16,
		ErrorLog:          log.New(lg, "growband: ", 0),
	}
	fmt.Fprintf(lg, "growband: serving %s on http://%s/ (Ctrl-C to stop)\n", strings.Join(names, ", "), ln.Addr())
	done := make(chan error, 1)
	go func() { done <- srv.Serve(ln) }()
	select {
	case err := <-done:
		return err
	case <-ctx.Done():
	}
	sctx, cancel := context.WithTimeout(context.Background(), shutdownTimeout)
	defer cancel()
	err = srv.Shutdown(sctx)
	if serr := <-done; serr != nil && !errors.Is(serr, http.ErrServerClosed) && err == nil {
		err = serr
	}
	fmt.Fprintln(lg, "growband: stopped")
	return err
}

// interfaceAddrs lists the IP addresses of this machine's interfaces.
func interfaceAddrs() []string {
	addrs, err := net.InterfaceAddrs()
	if err != nil {
		return nil
	}
	var out []string
	for _, a := range addrs {
		if n, ok := a.(*net.IPNet); ok {
			out = append(out, n.IP.String())
		}
	}
	return out
}

// isLoopback reports whether host names only this machine. An empty host
// (all interfaces) and host names other than localhost do not.
func isLoopback(host string) bool {
	if strings.EqualFold(host, "localhost") {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

// loadRefs loads the reference files, named by their base names without the
// extension.
func loadRefs(paths []string) ([]*curve.Reference, []string, error) {
	if len(paths) == 0 {
		return nil, nil, fmt.Errorf("%w: no reference file given (use --ref FILE)", ErrReferences)
	}
	refs := make([]*curve.Reference, len(paths))
	names := make([]string, len(paths))
	from := map[string]string{}
	for i, p := range paths {
		r, err := curve.LoadFile(p)
		if err != nil {
			return nil, nil, fmt.Errorf("%w: %v", ErrReferences, err)
		}
		base := filepath.Base(p)
		name := strings.TrimSuffix(base, filepath.Ext(base))
		if prev, dup := from[name]; dup {
			return nil, nil, fmt.Errorf("%w: %s and %s would both be called %q; rename one", ErrReferences, prev, p, name)
		}
		from[name] = p
		refs[i], names[i] = r, name
	}
	return refs, names, nil
}
