package main

import (
	"bytes"
	"errors"
	"flag"
	"testing"

	"growband/examples/district"
)

func TestRun(t *testing.T) {
	cases := []struct {
		args []string
		want []byte
		err  error
	}{
		{nil, district.CSV(), nil},
		{[]string{"-plan", "weight"}, district.Plan(district.Weight), nil},
		{[]string{"-plan", "length"}, district.Plan(district.Length), nil},
		{[]string{"-plan", "head"}, nil, errUsage},
		{[]string{"-nope"}, nil, errUsage},
		{[]string{"extra"}, nil, errUsage},
		{[]string{"-h"}, nil, flag.ErrHelp},
	}
	for _, c := range cases {
		var out, msg bytes.Buffer
		err := run(c.args, &out, &msg)
		if !errors.Is(err, c.err) || (c.err == nil && err != nil) {
			t.Errorf("%q: error %v, want %v", c.args, err, c.err)
		}
		if !bytes.Equal(out.Bytes(), c.want) {
			t.Errorf("%q: wrote %d bytes, want %d", c.args, out.Len(), len(c.want))
		}
	}
}
