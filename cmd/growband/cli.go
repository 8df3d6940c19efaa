package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"runtime/debug"
	"strings"
)

const usageTop = `usage: growband <command> [arguments]

growband builds growth references (smooth, non-crossing age-indexed centile
curves) from measurement data and uses them.

Commands:
  build    fit a reference from a plan file and write tables, charts and a report
  demo     build a reference from the invented Tarnwick District survey
  table    write centile (or velocity) tables from a reference file
  score    give z-scores and centiles of measurements against a reference
  chart    draw a reference's centile chart, optionally with children's points
  check    compare measurement data with a reference (coverage, Q-tests, worm plot)
  compare  compare a cohort (or a second reference) with a reference: mean z, shares below -2
  serve    a local clinic page and JSON scoring API for one or more references

Run "growband <command> -h" for a command's arguments.
`

// A command is one subcommand's run function.
type command func(args []string, stdout, stderr io.Writer) error

var commands = map[string]command{
	"build":   runBuild,
	"demo":    runDemo,
	"table":   runTable,
	"score":   runScore,
	"chart":   runChart,
	"check":   runCheck,
	"compare": runCompare,
	"serve":   runServe,
}

// errHelp is returned after a usage text was shown on request; it means
// success.
var errHelp = errors.New("help shown")

// usageError is a command line that cannot be run: exit status 2.
type usageError struct{ msg, cmd string }

func (e *usageError) Error() string { return e.msg }

func usagef(cmd, format string, args ...any) error {
	return &usageError{msg: fmt.Sprintf(format, args...), cmd: cmd}
}

// run dispatches to the subcommand and writes any error to stderr as
// "growband: ...". A panic is reported as an internal error, never a crash.
func run(args []string, stdout, stderr io.Writer) (err error) {
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("internal error (please report it): %v\n%s", p, debug.Stack())
			fmt.Fprintf(stderr, "growband: %v\n", err)
		}
	}()
	err = dispatch(args, stdout, stderr)
	var u *usageError
	switch {
	case err == nil, errors.Is(err, errHelp):
	case errors.As(err, &u):
		fmt.Fprintf(stderr, "growband: %v\n", err)
		if u.cmd != "" {
			fmt.Fprintf(stderr, "growband: run \"growband %s -h\" for usage\n", u.cmd)
		} else {
			fmt.Fprintf(stderr, "growband: run \"growband help\" for usage\n")
		}
	default:
		fmt.Fprintf(stderr, "growband: %v\n", err)
	}
	return err
}

func dispatch(args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		fmt.Fprint(stderr, usageTop)
		return &usageError{msg: "no command given"}
	}
	name := args[0]
	switch name {
	case "help", "-h", "-help", "--help":
		if len(args) > 1 {
			if c, ok := commands[args[1]]; ok {
				return c([]string{"-h"}, stdout, stderr)
			}
		}
		fmt.Fprint(stdout, usageTop)
		return errHelp
	}
	c, ok := commands[name]
	if !ok {
		return &usageError{msg: fmt.Sprintf("unknown command %q (commands: build, demo, table, score, chart, check, compare, serve)", name)}
	}
	return c(args[1:], stdout, stderr)
}

// newFlags returns a flag set for the subcommand that reports errors to
// the caller instead of printing or exiting.
func newFlags(name string) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	return fs
}

// parseFlags parses args with fs, allowing flags before and after the
// positional arguments (everything after "--" is positional), and returns
// the positional arguments. "-h" writes usage and the flags' help to stdout
// and returns errHelp.
func parseFlags(fs *flag.FlagSet, usage string, args []string, stdout io.Writer) ([]string, error) {
	var pos []string
	for {
		err := fs.Parse(args)
		if errors.Is(err, flag.ErrHelp) {
			fmt.Fprint(stdout, usage)
			if hasFlags(fs) {
				fmt.Fprintln(stdout, "\nFlags:")
				fs.SetOutput(stdout)
				fs.PrintDefaults()
				fs.SetOutput(io.Discard)
			}
			return nil, errHelp
		}
		if err != nil {
			return nil, usagef(fs.Name(), "%s: %v", fs.Name(), err)
		}
		rest := fs.Args()
		if len(rest) == 0 {
			return pos, nil
		}
		if used := len(args) - len(rest); used > 0 && args[used-1] == "--" {
			return append(pos, rest...), nil
		}
		pos = append(pos, rest[0])
		args = rest[1:]
	}
}

func hasFlags(fs *flag.FlagSet) bool {
	n := 0
	fs.VisitAll(func(*flag.Flag) { n++ })
	return n > 0
}

// progress writes "growband: ..." lines to stderr.
type progress struct{ w io.Writer }

func (p progress) printf(format string, args ...any) {
	if p.w == nil {
		return
	}
	fmt.Fprintf(p.w, "growband: "+strings.TrimSuffix(format, "\n")+"\n", args...)
}
