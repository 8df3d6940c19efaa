// Command gendistrict writes the invented Tarnwick District survey of
// package growband/examples/district to standard output, as CSV, or with
// -plan the demo plan for one measure.
//
// Usage:
//
//	gendistrict > survey.csv
//	gendistrict -plan weight > weight.toml
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"

	"growband/examples/district"
)

const usage = `usage: gendistrict [-plan weight|length]

Writes the invented Tarnwick District child-growth survey as CSV to standard
output; the bytes are the same on every run.

`

// errUsage marks a command-line mistake (exit code 2).
var errUsage = errors.New("gendistrict: bad usage")

func main() {
	err := run(os.Args[1:], os.Stdout, os.Stderr)
	switch {
	case err == nil:
	case errors.Is(err, flag.ErrHelp):
	case errors.Is(err, errUsage):
		fmt.Fprintln(os.Stderr, err)
		os.Exit(2)
	default:
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func run(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("gendistrict", flag.ContinueOnError)
	fs.SetOutput(stderr)
	plan := fs.String("plan", "", "write the demo plan for this measure (weight or length) instead of the survey")
	fs.Usage = func() {
		fmt.Fprint(stderr, usage)
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return err
		}
		return fmt.Errorf("%w: %v", errUsage, err)
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("%w: unexpected argument %q", errUsage, fs.Arg(0))
	}
	var out []byte
	switch m := district.Measure(*plan); m {
	case "":
		out = district.CSV()
	case district.Weight, district.Length:
		out = district.Plan(m)
	default:
		return fmt.Errorf("%w: -plan %q: want weight or length", errUsage, *plan)
	}
	if _, err := stdout.Write(out); err != nil {
		return fmt.Errorf("gendistrict: %w", err)
	}
	return nil
}
