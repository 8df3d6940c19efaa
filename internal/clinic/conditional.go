package clinic

import (
	"cmp"
	"errors"
	"slices"

	"growband/curve"
)

// change is the conditional score of a visit given the same child's
// previous visit, added to a result when the request names the child and
// the reference has a conditional model. CondZ and CondCentile are nil
// when the visit has none; CondNote says why.
type change struct {
	CondZ       *float64 `json:"cond_z"`
	CondCentile *float64 `json:"cond_centile"`
	CondNote    string   `json:"cond_note,omitempty"`
}

// addChanges gives every scored item with a child id its conditional score
// among the items of the same reference, stratum and child
// (curve.ScoreChanges: against the most recent earlier visit at a modelled
// gap).
func (c *catalog) addChanges(items []*measurement, out []result) {
	type key struct{ ref, stratum, child string }
	groups := map[key][]int{}
	var keys []key
	for i, m := range items {
		if m.Child == "" || out[i].Z == nil {
			continue
		}
		k := key{out[i].Reference, out[i].Stratum, m.Child}
		if _, ok := groups[k]; !ok {
			keys = append(keys, k)
		}
		groups[k] = append(groups[k], i)
	}
	slices.SortFunc(keys, func(a, b key) int {
		return cmp.Or(cmp.Compare(a.ref, b.ref), cmp.Compare(a.stratum, b.stratum), cmp.Compare(a.child, b.child))
	})
	for _, k := range keys {
		idx := groups[k]
		r := c.refs[slices.Index(c.names, k.ref)]
		d := &curve.Data{}
		for _, i := range idx {
			d.Age = append(d.Age, out[i].Age)
			d.Value = append(d.Value, out[i].Value)
			d.Stratum = append(d.Stratum, k.stratum)
			d.Subject = append(d.Subject, k.child)
		}
		for j, s := range r.ScoreChanges(d) {
			ch := &change{}
			if s.Err == nil {
				z, cen := s.Z, s.Centile
				ch.CondZ, ch.CondCentile = &z, &cen
			} else {
				ch.CondNote = changeNote(s.Err)
			}
			out[idx[j]].change = ch
		}
	}
}

// changeNote is the reason a visit has no conditional score.
func changeNote(err error) string {
	switch {
	case errors.Is(err, curve.ErrNoPrevious):
		return "no earlier visit of this child in the request"
	case errors.Is(err, curve.ErrGapRange):
		return "the time since the previous visit is outside the gaps the conditional model covers"
	case errors.Is(err, curve.ErrPrevRange):
		return "the previous visit's z-score is outside the conditional model's range"
	case errors.Is(err, curve.ErrNoConditional):
		return "the reference has no conditional model for this stratum"
	case errors.Is(err, curve.ErrAgeRange):
		return "the age is outside the conditional model's range"
	}
	return err.Error()
}
