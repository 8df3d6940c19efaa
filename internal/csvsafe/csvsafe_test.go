package csvsafe

import (
	"testing"
	"unicode/utf8"
)

// The cases follow the OWASP CSV-injection page's examples (from memory)
// and the numbers growband itself writes.
func TestCell(t *testing.T) {
	for in, want := range map[string]string{
		"":                           "",
		"F":                          "F",
		"TW00005":                    "TW00005",
		"=1+1":                       "'=1+1",
		`=HYPERLINK("http://x","y")`: `'=HYPERLINK("http://x","y")`,
		"@SUM(A1:A2)":                "'@SUM(A1:A2)",
		"+cmd|' /C calc'!A0":         "'+cmd|' /C calc'!A0",
		"-2+3+cmd|' /C calc'!A0":     "'-2+3+cmd|' /C calc'!A0",
		"-":                          "'-",
		"+":                          "'+",
		"\t=1":                       "'\t=1",
		"\r=1":                       "'\r=1",
		"-1.25":                      "-1.25",
		"+3":                         "+3",
		"-2,5":                       "-2,5",
		"-0.5e-3":                    "-0.5e-3",
		"-.5":                        "-.5",
		"-1e":                        "'-1e",
		"-1.2.3":                     "'-1.2.3",
		"-inf":                       "'-inf",
		"-0x1p3":                     "'-0x1p3",
		"1=1":                        "1=1",
		"a\xffb":                     "a\uFFFDb",
		"=\xff":                      "'=\uFFFD",
	} {
		if got := Cell(in); got != want {
			t.Errorf("Cell(%q) = %q, want %q", in, got, want)
		}
	}
}

// FuzzCell checks the promise on any text: valid UTF-8, never a leading
// formula character unless the cell is a plain number.
func FuzzCell(f *testing.F) {
	for _, s := range []string{"=1", "-1.5", "@x", "\t", "a", "-", "+1e5", "\xff"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		c := Cell(s)
		if !utf8.ValidString(c) {
			t.Fatalf("Cell(%q) = %q is not UTF-8", s, c)
		}
		if c != "" && c[0] != '\'' {
			switch c[0] {
			case '=', '@', '\t', '\r':
				t.Fatalf("Cell(%q) = %q starts a formula", s, c)
			case '+', '-':
				if !isNumber(c) {
					t.Fatalf("Cell(%q) = %q starts a formula", s, c)
				}
			}
		}
	})
}
