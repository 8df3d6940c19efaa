package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"

	"growband/internal/clinic"
)

const serveUsage = `usage: growband serve --ref FILE [--ref FILE ...] [--addr HOST:PORT]
                      [--allow-remote [--host NAME ...]] [--audit-log FILE]

Serves the clinic page and the scoring API (under /api/v1/) for the given
reference files until interrupted (Ctrl-C or SIGTERM). It keeps no children's
data: nothing is written to disk and nothing is logged unless --audit-log asks.

It listens on this machine's loopback address only. --allow-remote lets it
listen on an address other machines reach (the page has no login and no
encryption: trusted networks only); they must then address it by the
listening address itself or by a host name given with --host. Requests
naming any other host are refused, and so are submissions from pages of
other sites.
`

// stringList is a repeatable flag that also takes comma-separated lists.
type stringList []string

func (l *stringList) String() string { return strings.Join(*l, ",") }

func (l *stringList) Set(s string) error {
	for _, part := range strings.Split(s, ",") {
		part = strings.TrimSpace(part)
		if part == "" {
			return errors.New("empty name")
		}
		*l = append(*l, part)
	}
	return nil
}

// runServe is "growband serve": it parses the flags into clinic.Options,
// serves until SIGINT or SIGTERM and returns nil after a clean shutdown.
func runServe(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("serve")
	var refs, hosts stringList
	opt := clinic.Options{Log: stderr}
	fs.Var(&refs, "ref", "reference `FILE` to serve (repeatable; named by the file name)")
	fs.StringVar(&opt.Addr, "addr", clinic.DefaultAddr, "listen address `HOST:PORT`")
	fs.BoolVar(&opt.AllowRemote, "allow-remote", false, "allow an --addr other machines reach (no login, no encryption: trusted networks only)")
	fs.Var(&hosts, "host", "host `NAME` other machines use for this server (repeatable or comma list; with --allow-remote)")
	audit := fs.String("audit-log", "", "append every scored measurement as a JSON line to `FILE` (children's data!)")
	pos, err := parseFlags(fs, serveUsage, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("serve", "serve: unexpected argument %q (reference files are given with --ref)", pos[0])
	}
	if len(refs) == 0 {
		return usagef("serve", "serve: no reference file given (use --ref FILE)")
	}
	if len(hosts) > 0 && !opt.AllowRemote {
		return usagef("serve", "serve: --host names the server for other machines and needs --allow-remote")
	}
	opt.Refs, opt.Hosts = refs, hosts
	if *audit != "" {
		f, err := os.OpenFile(*audit, os.O_WRONLY|os.O_CREATE|os.O_APPEND, 0o600)
		if err != nil {
			return fmt.Errorf("audit log: %w", err)
		}
		fmt.Fprintf(stderr, "growband: audit log %s receives every scored measurement\n", *audit)
		opt.Audit, opt.AuditName = f, filepath.Base(*audit)
		defer func() {
			if cerr := f.Close(); cerr != nil {
				fmt.Fprintf(stderr, "growband: audit log: %v\n", cerr)
			}
		}()
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	err = clinic.Serve(ctx, opt)
	if errors.Is(err, clinic.ErrRemote) {
		return usagef("serve", "serve: %s is not a loopback address: the page has no login and no encryption; "+
			"add --allow-remote (and --host NAME for the names other machines use) to serve other machines", opt.Addr)
	}
	return err
}
