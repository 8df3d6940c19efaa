package intake

import (
	"slices"
	"sort"
)

// Row is a data row that is used.
type Row struct {
	Line    int     // line in the file where the row starts (header = 1)
	Age     float64 // in the age unit of the Spec
	Value   float64 // in the measure unit of the Spec (after conversion)
	Weight  float64 // sampling weight; 1 without a weight column
	Stratum string  // stratum label after code mapping; "" without a stratum column
	Subject string  // subject id; "" without a subject column
	Fields  []string
}

// Exclusion is a data row that is not used, with its reason.
type Exclusion struct {
	Line   int
	Reason Reason
	Detail string   // which column or value, for example `weight_kg: "12kg"`; may be ""
	Fields []string // the row as read; nil for a badly quoted row
}

// Text is the reason with its detail, as written to excluded.csv.
func (e *Exclusion) Text() string {
	if e.Detail == "" {
		return e.Reason.String()
	}
	return e.Reason.String() + " (" + e.Detail + ")"
}

// Table is the result of reading a measurement file: every data row read is in
// exactly one of Rows and Excluded, so len(Rows)+len(Excluded) == Total
// always. Both slices are in file order.
type Table struct {
	Name         string   // file name used in messages
	Header       []string // header fields as written
	Delimiter    rune     // the delimiter used (detected or given)
	DecimalComma bool     // whether numbers were read with a decimal comma
	Total        int      // data rows read
	Stratum      string   // name of the stratum column read, "" for none
	DateHint     string   // see Reader.DateHint; "" when dates read well
	Rows         []Row
	Excluded     []Exclusion

	hasWeight, hasStratum, hasSubject bool
}

// ReasonCount is the number of excluded rows with one reason.
type ReasonCount struct {
	Reason Reason
	N      int
}

// Counts returns the number of excluded rows per reason, in reason order,
// leaving out reasons with no rows.
func (t *Table) Counts() []ReasonCount {
	var n [numReasons]int
	for i := range t.Excluded {
		n[t.Excluded[i].Reason]++
	}
	var out []ReasonCount
	for r := Reason(1); r < numReasons; r++ {
		if n[r] > 0 {
			out = append(out, ReasonCount{r, n[r]})
		}
	}
	return out
}

// Exclude moves the used rows t.Rows[i], i in idx, to t.Excluded with the
// given reason (typically ReasonImplausible after a first-pass fit). detail
// is nil or holds one detail text per index, for example "z = 6.1".
// Repeated indices count once. The remaining Rows keep their order, so
// indices into Rows taken before the call are stale after it.
//
// Exclude panics on an index out of range, an invalid reason or a detail
// slice of the wrong length: those are programming mistakes.
func (t *Table) Exclude(idx []int, r Reason, detail []string) {
	if !r.valid() {
		panic("intake: Exclude with an invalid reason")
	}
	if detail != nil && len(detail) != len(idx) {
		panic("intake: Exclude detail length differs from idx length")
	}
	if len(idx) == 0 {
		return
	}
	mark := make(map[int]string, len(idx))
	for k, i := range idx {
		if i < 0 || i >= len(t.Rows) {
			panic("intake: Exclude index out of range")
		}
		if _, seen := mark[i]; seen {
			continue
		}
		d := ""
		if detail != nil {
			d = detail[k]
		}
		mark[i] = d
	}
	kept := t.Rows[:0]
	for i := range t.Rows {
		d, out := mark[i]
		if !out {
			kept = append(kept, t.Rows[i])
			continue
		}
		row := &t.Rows[i]
		t.Excluded = append(t.Excluded, Exclusion{Line: row.Line, Reason: r, Detail: d, Fields: row.Fields})
	}
	clear(t.Rows[len(kept):])
	t.Rows = kept
	sort.SliceStable(t.Excluded, func(a, b int) bool { return t.Excluded[a].Line < t.Excluded[b].Line })
}

// Record is one data row in file order: exactly one of Row and Excl is set.
// The pointers point into the Table and are valid until it is changed.
type Record struct {
	Line   int
	Fields []string
	Row    *Row
	Excl   *Exclusion
}

// All returns every data row read, used or not, in file order. It is meant
// for echoing an input file back with added columns.
func (t *Table) All() []Record {
	out := make([]Record, 0, len(t.Rows)+len(t.Excluded))
	i, j := 0, 0
	for i < len(t.Rows) || j < len(t.Excluded) {
		if j >= len(t.Excluded) || (i < len(t.Rows) && t.Rows[i].Line < t.Excluded[j].Line) {
			r := &t.Rows[i]
			out = append(out, Record{Line: r.Line, Fields: r.Fields, Row: r})
			i++
			continue
		}
		e := &t.Excluded[j]
		out = append(out, Record{Line: e.Line, Fields: e.Fields, Excl: e})
		j++
	}
	return out
}

// Columns returns the used rows column-wise, in the layout of curve.Data:
// weight is nil without a weight column, stratum nil without a stratum
// column and subject nil without a subject column.
func (t *Table) Columns() (age, value, weight []float64, stratum, subject []string) {
	n := len(t.Rows)
	age = make([]float64, n)
	value = make([]float64, n)
	if t.hasWeight {
		weight = make([]float64, n)
	}
	if t.hasStratum {
		stratum = make([]string, n)
	}
	if t.hasSubject {
		subject = make([]string, n)
	}
	for i := range t.Rows {
		r := &t.Rows[i]
		age[i], value[i] = r.Age, r.Value
		if weight != nil {
			weight[i] = r.Weight
		}
		if stratum != nil {
			stratum[i] = r.Stratum
		}
		if subject != nil {
			subject[i] = r.Subject
		}
	}
	return age, value, weight, stratum, subject
}

// Strata returns the distinct stratum labels of the used rows, sorted; nil
// without a stratum column.
func (t *Table) Strata() []string {
	if !t.hasStratum {
		return nil
	}
	var s []string
	for i := range t.Rows {
		s = append(s, t.Rows[i].Stratum)
	}
	slices.Sort(s)
	return slices.Compact(s)
}
