package intake

import (
	"fmt"
	"strings"
	"testing"
)

// strayQuoteFile is a 3,000-row CSV whose line 3 (the second data row)
// opens a quote it never closes; named, when true, quotes a text column on
// every row, so that the stray quote pairs with a later row's quote.
func strayQuoteFile(named bool) string {
	var b strings.Builder
	b.WriteString("id,clinic,age,value\n")
	for i := 1; i <= 3000; i++ {
		clinic := "Fellside"
		if named {
			clinic = `"Fellside, north"`
		}
		if i == 2 {
			clinic = `"Fellside`
		}
		fmt.Fprintf(&b, "c%d,%s,%d,%.1f\n", i, clinic, i%60, 5+float64(i%60)/5)
	}
	return b.String()
}

func TestReadStrayQuote(t *testing.T) {
	for _, named := range []bool{false, true} {
		t.Run(fmt.Sprintf("quoted text column %v", named), func(t *testing.T) {
			tb := readString(t, strayQuoteFile(named), &Spec{Age: "age", Value: "value"})
			if tb.Total != 3000 {
				t.Fatalf("rows read %d, want 3000 (every data line)", tb.Total)
			}
			if len(tb.Rows) != 2999 || len(tb.Excluded) != 1 {
				t.Fatalf("%d used, %d excluded, want 2999 and 1: %+v", len(tb.Rows), len(tb.Excluded), tb.Excluded)
			}
			e := tb.Excluded[0]
			if e.Line != 3 || e.Reason != ReasonQuotes || !strings.Contains(e.Detail, `c2,"Fellside,2,5.4`) {
				t.Fatalf("damaged row listed as %+v, want line 3, badly quoted, with its text", e)
			}
			if tb.Rows[1].Line != 4 || tb.Rows[len(tb.Rows)-1].Line != 3001 {
				t.Fatalf("rows after the stray quote: first at line %d, last at %d; want 4 and 3001", tb.Rows[1].Line, tb.Rows[len(tb.Rows)-1].Line)
			}
			if got := tb.Rows[1].Fields[0]; got != "c3" {
				t.Fatalf("row after the damaged one is %q, want c3", got)
			}
		})
	}
}

func TestReadQuotedLineBreaks(t *testing.T) {
	in := "id,note,age,value\n" +
		"a,\"two\r\nlines\",1,2\n" +
		"b,\"three\n\n\"\"lines\"\"\",3,4\n" +
		"c,plain,5,6\n" +
		"d,\"runs on,7,8\n" + // stray quote: pairs with row e's, giving 3 fields
		"e,\"x\",9,10\n" +
		"f,\"never closed,11,12\n"
	tb := readString(t, in, &Spec{Age: "age", Value: "value"})
	if tb.Total != 6 {
		t.Fatalf("rows read %d, want 6", tb.Total)
	}
	want := []struct {
		line int
		note string
	}{{2, "two\nlines"}, {4, "three\n\n\"lines\""}, {7, "plain"}, {9, "x"}}
	if len(tb.Rows) != len(want) {
		t.Fatalf("used %+v, excluded %+v", tb.Rows, tb.Excluded)
	}
	for i, w := range want {
		if tb.Rows[i].Line != w.line || tb.Rows[i].Fields[1] != w.note {
			t.Fatalf("row %d: line %d note %q, want %d %q", i, tb.Rows[i].Line, tb.Rows[i].Fields[1], w.line, w.note)
		}
	}
	for i, line := range []int{8, 10} {
		if e := tb.Excluded[i]; e.Line != line || e.Reason != ReasonQuotes {
			t.Fatalf("excluded %d: %+v, want line %d badly quoted", i, e, line)
		}
	}
	if !strings.Contains(tb.Excluded[1].Detail, "not closed before the end of the file") {
		t.Fatalf("detail %q", tb.Excluded[1].Detail)
	}
}

// A quote that stays open past maxQuotedLines is a stray one even when it
// would close later with the right shape.
func TestReadQuoteOpenTooLong(t *testing.T) {
	var b strings.Builder
	b.WriteString("id,note,age,value\nx,\"open,1,2\n")
	for i := 0; i < maxQuotedLines+5; i++ {
		fmt.Fprintf(&b, "r%d,n,%d,3\n", i, i%50)
	}
	b.WriteString("z,closes\",4,5\n")
	tb := readString(t, b.String(), &Spec{Age: "age", Value: "value"})
	if tb.Total != maxQuotedLines+7 || tb.Excluded[0].Line != 2 || tb.Excluded[0].Reason != ReasonQuotes {
		t.Fatalf("total %d, first exclusion %+v", tb.Total, tb.Excluded[0])
	}
	if len(tb.Rows) != maxQuotedLines+5 {
		t.Fatalf("%d rows used, want %d", len(tb.Rows), maxQuotedLines+5)
	}
}
