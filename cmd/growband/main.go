package main

import (
	"errors"
	"os"
)

func main() {
	os.Exit(exitCode(run(os.Args[1:], os.Stdout, os.Stderr)))
}

// exitCode maps the result of run to the process exit status: 0 success
// (and help asked for), 2 bad usage, 1 any other failure. run has already
// written the message.
func exitCode(err error) int {
	var u *usageError
	switch {
	case err == nil, errors.Is(err, errHelp):
		return 0
	case errors.As(err, &u):
		return 2
	default:
		return 1
	}
}
