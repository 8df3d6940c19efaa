package intake

import (
	"encoding/csv"
	"io"
	"strconv"
)

// WriteExcluded writes the excluded rows of t as comma-separated CSV with
// the columns line, reason, then the fields of the original header; each row
// holds its line number, Exclusion.Text and the fields as read. A row whose
// field count differed from the header is written with its own fields.
func WriteExcluded(w io.Writer, t *Table) error {
	cw := csv.NewWriter(w)
	head := append([]string{"line", "reason"}, t.Header...)
	if err := cw.Write(head); err != nil {
		return err
	}
	rec := make([]string, 0, len(head))
	for i := range t.Excluded {
		e := &t.Excluded[i]
		rec = append(rec[:0], strconv.Itoa(e.Line), e.Text())
		rec = append(rec, e.Fields...)
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
