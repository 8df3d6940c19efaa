package intake

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode/utf8"
)

// detectDelimiter picks the delimiter of a header line: the most frequent of
// comma, semicolon and tab outside double quotes, preferring them in that
// order on a tie. A header with none of them is read as comma-separated.
func detectDelimiter(header []byte) rune {
	var n [3]int
	quoted := false
	for _, c := range header {
		switch {
		case c == '"':
			quoted = !quoted
		case quoted:
		case c == ',':
			n[0]++
		case c == ';':
			n[1]++
		case c == '\t':
			n[2]++
		}
	}
	best := 0
	for k := 1; k < 3; k++ {
		if n[k] > n[best] {
			best = k
		}
	}
	return [3]rune{',', ';', '\t'}[best]
}

// looksComma reports whether s is a plain number written with a decimal
// comma, like 12,5 or -0,25.
func looksComma(s string) bool {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	a := digits(s, i)
	if a == i || a >= len(s) || s[a] != ',' {
		return false
	}
	b := digits(s, a+1)
	return b > a+1 && b == len(s)
}

// looksPoint reports whether s is a plain number with a decimal point, like
// 12.5, .5 or 1.5e3.
func looksPoint(s string) bool {
	for k := 0; k < len(s); k++ {
		if s[k] == '.' {
			return isDecimal(s)
		}
	}
	return false
}

// isDecimal reports whether s is a decimal number: optional sign, digits
// with at most one point and at least one digit, optional exponent. It
// rejects what strconv.ParseFloat accepts beyond that (hex, underscores,
// Inf, NaN).
func isDecimal(s string) bool {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	a := digits(s, i)
	nd := a - i
	if a < len(s) && s[a] == '.' {
		b := digits(s, a+1)
		nd += b - a - 1
		a = b
	}
	if nd == 0 {
		return false
	}
	if a < len(s) && (s[a] == 'e' || s[a] == 'E') {
		a++
		if a < len(s) && (s[a] == '+' || s[a] == '-') {
			a++
		}
		b := digits(s, a)
		if b == a {
			return false
		}
		a = b
	}
	return a == len(s)
}

func digits(s string, i int) int {
	for i < len(s) && s[i] >= '0' && s[i] <= '9' {
		i++
	}
	return i
}

// firstInvalidUTF8 returns the byte offset of the first invalid UTF-8
// sequence in b, or -1.
func firstInvalidUTF8(b []byte) int {
	for i := 0; i < len(b); {
		r, size := utf8.DecodeRune(b[i:])
		if r == utf8.RuneError && size == 1 {
			return i
		}
		i += size
	}
	return -1
}

// ParseNumber reads a plain decimal number as a person writes it, with a
// decimal point: optional sign, digits, an optional exponent. It refuses
// what only a programming language reads as a number (1_2, 0x1.2p3, Inf,
// NaN) and values too large to represent.
func ParseNumber(s string) (float64, error) {
	t := strings.TrimSpace(s)
	if !isDecimal(t) {
		return 0, fmt.Errorf("%q is not a number", s)
	}
	x, err := strconv.ParseFloat(t, 64)
	if err != nil || math.IsInf(x, 0) || math.IsNaN(x) {
		return 0, fmt.Errorf("%q is not a finite number", s)
	}
	return x, nil
}
