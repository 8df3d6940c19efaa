package clinic

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log"
	"net"
	"net/http"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"

	"growband/curve"
)

// Serve loads opt.Refs and serves the page and the API on opt.Addr until ctx
// is done, then shuts down gracefully: requests in progress get up to 10 s to
// finish. It refuses a non-loopback address unless opt.AllowRemote is set,
// and warns on opt.Log when it is. Errors wrap ErrReferences (no reference,
// one that cannot be loaded, two with the same name) or ErrAddr; a nil error
// means a clean shutdown.
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
				"so allow other machines explicitly if that is really wanted", ErrAddr, addr)
		}
		fmt.Fprintf(lg, "growband: warning: listening on %s, reachable from other machines: "+
			"the page has no login and no encryption; use it only on a trusted network\n", addr)
	}
	ln, err := net.Listen("tcp", addr)
	if err != nil {
		return fmt.Errorf("%w: %v", ErrAddr, err)
	}
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

// refList is the repeatable --ref flag.
type refList []string

func (l *refList) String() string { return strings.Join(*l, ",") }
func (l *refList) Set(s string) error {
	if strings.TrimSpace(s) == "" {
		return errors.New("empty file name")
	}
	*l = append(*l, s)
	return nil
}

const serveUsage = `usage: growband serve --ref FILE [--ref FILE ...] [--addr HOST:PORT] [--allow-remote] [--audit-log FILE]

Serves the clinic page and the scoring API (under /api/v1/) for the given
reference files until interrupted (Ctrl-C or SIGTERM). It keeps no children's
data: nothing is written to disk and nothing is logged unless --audit-log asks.

Flags:
`

// RunServe is the "growband serve" subcommand: it parses args, serves until
// SIGINT or SIGTERM and returns nil after a clean shutdown. Messages go to
// stderr as "growband: ..."; stdout is not used. -h prints the usage and
// returns flag.ErrHelp; bad flags return an error wrapping ErrUsage; other
// errors wrap ErrReferences or ErrAddr, or are audit-log file errors.
func RunServe(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("serve", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var refs refList
	opt := Options{Log: stderr}
	fs.Var(&refs, "ref", "reference `FILE` to serve (repeatable; named by the file name)")
	fs.StringVar(&opt.Addr, "addr", DefaultAddr, "listen address `HOST:PORT`")
	fs.BoolVar(&opt.AllowRemote, "allow-remote", false, "allow a non-loopback --addr (no login, no encryption: trusted networks only)")
	audit := fs.String("audit-log", "", "append every scored measurement as a JSON line to `FILE` (children's data!)")
	fs.Usage = func() {
		fmt.Fprint(stderr, serveUsage)
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return err
		}
		return fmt.Errorf("%w: %v", ErrUsage, err)
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("%w: unexpected argument %q (reference files are given with --ref)", ErrUsage, fs.Arg(0))
	}
	if len(refs) == 0 {
		return fmt.Errorf("%w: no reference file given (use --ref FILE)", ErrUsage)
	}
	opt.Refs = refs
	if *audit != "" {
		f, err := os.OpenFile(*audit, os.O_WRONLY|os.O_CREATE|os.O_APPEND, 0o600)
		if err != nil {
			return fmt.Errorf("audit log: %w", err)
		}
		fmt.Fprintf(stderr, "growband: audit log %s receives every scored measurement\n", *audit)
		opt.Audit = f
		defer func() {
			if cerr := f.Close(); cerr != nil {
				fmt.Fprintf(stderr, "growband: audit log: %v\n", cerr)
			}
		}()
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	return Serve(ctx, opt)
}
