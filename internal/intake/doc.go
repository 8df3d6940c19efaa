// Package intake turns a user's measurement file (CSV, an Excel workbook or
// an Apache Parquet file) and TOML plan into clean measurement rows, and
// lists every row it does not use with its reason: nothing is lost
// silently. A Reader streams the rows one at a time; Read collects them.
//
// A build reads a plan and its input:
//
//	plan, err := intake.LoadPlan("weight.toml") // errors name file:line and key
//	t, err := plan.ReadInput()                  // = intake.ReadFile(plan.Input.File, plan.Spec())
//	age, value, weight, stratum, subject := t.Columns()
//	t.Exclude(idx, intake.ReasonImplausible, details) // after a first-pass fit
//	intake.WriteExcluded(w, t)                  // excluded.csv
//
// Scoring new measurements uses the same reader with a Spec built from
// command-line flags, typically with KeepDuplicates set; t.All() then walks
// every input row in file order, used or not, to echo it back.
//
// Every data row read is either a Row or an Exclusion carrying one Reason,
// and len(t.Rows)+len(t.Excluded) == t.Total always holds, also after
// Exclude. A file that cannot be used at all (missing, empty, no data rows,
// not UTF-8 text, a named column absent from the header) is an *Error whose
// text reads like
//
//	survey.csv:1: column "weight_kg" not in header (have: a, b, c)
//
// Reading rules, each common practice for survey exports: the delimiter
// (comma, semicolon or tab) is the most frequent one outside quotes on the
// header line; a UTF-8 byte-order mark and CRLF line endings are accepted; a
// quoted field may span lines, but one still open when the row has broken
// its shape (a stray quote) spoils only its first line, listed as a badly
// quoted row, and reading resumes on the next; a decimal comma is read
// automatically, never with a comma delimiter, when more number cells of
// the first rows look like 12,5 than like 12.5, and a cell written the other
// way is excluded alone. Impossible values (a body measurement of 0 or
// below, a negative age) are excluded whatever the plausible ranges. Age from dates is the exact
// number of calendar days between birth and measurement, converted with
// 7 days a week, 30.4375 days a month and 365.25 days a year. Mass and length
// conversions use the exact factors 1 lb = 0.45359237 kg and 1 in = 2.54 cm
// of the international yard and pound agreement (1959).
//
// The plan file's keys, types and defaults are documented in PLAN.md beside
// this file.
package intake
