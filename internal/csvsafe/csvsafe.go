// Package csvsafe makes text safe to write as a cell of a CSV file that a
// person may open in a spreadsheet.
//
// A spreadsheet runs a cell that starts with =, +, - or @ as a formula, and
// some also one that starts with a tab or a carriage return; a formula can
// fetch data from elsewhere or run a program (CSV or formula injection).
// Following the OWASP guidance on CSV injection, Cell prefixes such a cell
// with a single quote, which spreadsheets show as text and do not run.
// Numbers ("-1.25", "+3", "-2,5", "1e-3") are left alone: a z-score of
// -1.25 stays a number.
//
// References:
//
//	OWASP Foundation. CSV Injection. https://owasp.org/www-community/attacks/CSV_Injection
package csvsafe

import (
	"strings"
	"unicode/utf8"
)

// Cell returns s ready to be written as a CSV cell: bytes that are not
// UTF-8 become U+FFFD, and a cell that a spreadsheet would run as a formula
// gets a leading single quote. Plain numbers are returned unchanged.
func Cell(s string) string {
	if !utf8.ValidString(s) {
		s = strings.ToValidUTF8(s, "\uFFFD")
	}
	if s == "" {
		return s
	}
	switch s[0] {
	case '=', '@', '\t', '\r':
		return "'" + s
	case '+', '-':
		if isNumber(s) {
			return s
		}
		return "'" + s
	}
	return s
}

// isNumber reports whether s is a plain decimal number: an optional sign,
// digits with at most one decimal point or comma, and an optional exponent.
func isNumber(s string) bool {
	i := 0
	if s != "" && (s[0] == '+' || s[0] == '-') {
		i++
	}
	digits, sep := 0, false
	for ; i < len(s); i++ {
		c := s[i]
		if c >= '0' && c <= '9' {
			digits++
			continue
		}
		if (c == '.' || c == ',') && !sep {
			sep = true
			continue
		}
		break
	}
	if digits == 0 {
		return false
	}
	if i == len(s) {
		return true
	}
	if s[i] != 'e' && s[i] != 'E' {
		return false
	}
	exp := s[i+1:]
	if exp != "" && (exp[0] == '+' || exp[0] == '-') {
		exp = exp[1:]
	}
	if exp == "" {
		return false
	}
	for j := 0; j < len(exp); j++ {
		if exp[j] < '0' || exp[j] > '9' {
			return false
		}
	}
	return true
}
