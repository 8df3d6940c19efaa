package main

import (
	"bytes"
	"io"
	"math"
	"strings"
	"testing"

	"growband/internal/intake"
)

func TestGrid(t *testing.T) {
	// 0:60:0.1 has 601 ages ending exactly at 60 (exact arithmetic), despite
	// 0.1 not being a binary fraction.
	g := grid(0, 60, 0.1)
	if len(g) != 601 || g[600] != 60 || g[3] != 0.3 {
		t.Errorf("grid(0, 60, 0.1): %d ages, last %v, g[3] %v", len(g), g[len(g)-1], g[3])
	}
	if g := grid(1, 2, 5); len(g) != 1 || g[0] != 1 {
		t.Errorf("grid(1, 2, 5) = %v, want [1]", g)
	}
}

func TestNiceStep(t *testing.T) {
	// Tidy steps of 1, 2, 2.5, 5 x 10^k (common practice for axis and table
	// grids) for about 60 parts.
	for _, c := range []struct{ span, want float64 }{
		{60, 1}, {59.96, 1}, {5, 0.1}, {1826, 50}, {18, 0.5}, {150, 2.5},
	} {
		if got := niceStep(c.span, tableRows); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("niceStep(%v) = %v, want %v", c.span, got, c.want)
		}
	}
}

func TestParseAges(t *testing.T) {
	for _, c := range []struct {
		in   string
		n    int
		last float64
		bad  bool
	}{
		{"0:60:0.5", 121, 60, false},
		{"1,2,3", 3, 3, false},
		{" 4 , 7.5 ", 2, 7.5, false},
		{"0:60", 0, 0, true},
		{"60:0:1", 0, 0, true},
		{"0:60:0", 0, 0, true},
		{"0:1:1e-9", 0, 0, true},
		{"a,b", 0, 0, true},
		{"NaN", 0, 0, true},
		{",", 0, 0, true},
	} {
		got, err := parseAges(c.in)
		if (err != nil) != c.bad {
			t.Errorf("parseAges(%q): error %v, want error %v", c.in, err, c.bad)
			continue
		}
		if !c.bad && (len(got) != c.n || got[len(got)-1] != c.last) {
			t.Errorf("parseAges(%q): %d ages ending %v, want %d ending %v", c.in, len(got), got[len(got)-1], c.n, c.last)
		}
	}
}

func TestFileStems(t *testing.T) {
	got := fileStems(nil)
	if len(got) != 0 {
		t.Errorf("fileStems(nil) = %v", got)
	}
	for in, want := range map[string]string{"": "all", "Girls 0-5 y": "girls-0-5-y", "ÄÖ": "all", "a/b": "a-b"} {
		if got := fileStem(in); got != want {
			t.Errorf("fileStem(%q) = %q, want %q", in, got, want)
		}
	}
}

// TestPanicIsReported: a panic inside a command becomes an internal error
// with exit status 1, not a crash.
func TestPanicIsReported(t *testing.T) {
	commands["boom"] = func([]string, io.Writer, io.Writer) error { panic("deliberate") }
	defer delete(commands, "boom")
	var stderr bytes.Buffer
	err := run([]string{"boom"}, io.Discard, &stderr)
	if exitCode(err) != 1 || !strings.HasPrefix(stderr.String(), "growband: internal error") {
		t.Errorf("exit %d, stderr %q", exitCode(err), stderr.String())
	}
}

func FuzzParseAges(f *testing.F) {
	for _, s := range []string{"0:60:0.5", "1,2,3", "0:1e300:1e-300", "-1:1:0.25", ":", ",,"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		ages, err := parseAges(s)
		if err != nil {
			return
		}
		if len(ages) == 0 || len(ages) > 1e6+1 {
			t.Fatalf("parseAges(%q): %d ages", s, len(ages))
		}
		for _, a := range ages {
			if math.IsNaN(a) || math.IsInf(a, 0) {
				t.Fatalf("parseAges(%q): age %v", s, a)
			}
		}
	})
}

func FuzzParseCodes(f *testing.F) {
	for _, s := range []string{"F=female,M=male", "1=a", "=", "a=", "x"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		m, err := intake.ParseCodes(s)
		if err == nil && len(m) == 0 {
			t.Fatalf("parseCodes(%q): no codes and no error", s)
		}
	})
}
