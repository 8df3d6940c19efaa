package scorefile

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"growband/curve"
	"growband/internal/intake"
)

// Cond is a row's conditional score: its place among the conditional
// centiles given the same child's previous visit (curve.ScoreChanges). Z and
// Centile are NaN when the row has none; the reason is then in Row.Flag.
type Cond struct {
	Z, Centile float64
}

// CondColumns are the columns added beside z and centile when conditional
// scores are asked for.
var CondColumns = []string{"cond_z", "cond_centile"}

// ErrNoSubject: conditional scores need a subject column.
var ErrNoSubject = errors.New("no subject column")

// AddChanges gives every row of rows (the result of Score on t, in the same
// order) a conditional score against the previous visit of the same child
// (t must have been read with a subject column); a scored row without one
// gets the reason added to its flag. It returns an error when r has no
// conditional model or t no subject column.
func AddChanges(r *curve.Reference, t *intake.Table, rows []Row) error {
	has := false
	for _, st := range r.Strata {
		has = has || st.Conditional != nil
	}
	if !has {
		return fmt.Errorf("%w: the reference has no conditional model (build it with a [conditional] table in the plan)", curve.ErrNoConditional)
	}
	if _, _, _, _, subject := t.Columns(); subject == nil {
		return fmt.Errorf("%s: %w: conditional scores pair visits of the same child", t.Name, ErrNoSubject)
	}
	recs := t.All()
	if len(recs) != len(rows) {
		panic("scorefile: AddChanges: rows are not those of the table")
	}
	var idx []int
	d := &curve.Data{}
	for i, rec := range recs {
		rows[i].Cond = &Cond{Z: math.NaN(), Centile: math.NaN()}
		if !rows[i].OK {
			continue
		}
		idx = append(idx, i)
		d.Age = append(d.Age, rows[i].Age)
		d.Value = append(d.Value, rows[i].Value)
		d.Stratum = append(d.Stratum, rows[i].Stratum)
		d.Subject = append(d.Subject, rec.Row.Subject)
	}
	for k, c := range r.ScoreChanges(d) {
		o := &rows[idx[k]]
		if c.Err != nil {
			o.Flag = joinFlag(o.Flag, "no cond_z: "+condReason(r, c.Err))
			continue
		}
		o.Cond.Z, o.Cond.Centile = c.Z, c.Centile
		if f := c.Flags.String(); f != "" {
			o.Flag = joinFlag(o.Flag, "cond "+f)
		}
	}
	return nil
}

func joinFlag(a, b string) string {
	if a == "" {
		return b
	}
	return a + ";" + b
}

// condReason is the short text of a conditional scoring error.
func condReason(r *curve.Reference, err error) string {
	switch {
	case errors.Is(err, curve.ErrNoPrevious):
		return "no earlier visit of the child"
	case errors.Is(err, curve.ErrGapRange):
		return "time since the previous visit outside the modelled gaps" + after(err, ":")
	case errors.Is(err, curve.ErrPrevRange):
		return "previous z-score outside the conditional model's range"
	case errors.Is(err, curve.ErrNoConditional):
		return "no conditional model for this stratum"
	case errors.Is(err, curve.ErrAgeRange):
		return "age outside the conditional model's range"
	}
	return Reason(r, err)
}

// after returns the text of err after its last sep, in parentheses.
func after(err error, sep string) string {
	s := err.Error()
	if i := strings.LastIndex(s, sep); i >= 0 {
		return " (" + strings.TrimSpace(s[i+1:]) + ")"
	}
	return ""
}
