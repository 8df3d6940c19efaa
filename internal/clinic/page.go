package clinic

import (
	"bytes"
	"cmp"
	"errors"
	"fmt"
	"html/template"
	"math"
	"net/http"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"

	"growband/curve"
)

// maxVisits is the most visit rows the page takes for one child.
const maxVisits = 60

// pageTemplate is the page, parsed once from the embedded assets.
var pageTemplate = template.Must(template.New("page.html").ParseFS(templates, "templates/page.html"))

// flagText explains each flag on the page.
var flagText = map[string]string{
	"beyond-tail":  "beyond the outermost fitted centiles: z from the tail rule",
	"implausible":  fmt.Sprintf("implausible (|z| > %d): check the measurement and the entry", curve.ImplausibleZ),
	"sparse":       "few children in the reference data support the curve here",
	"unscored":     "not scored",
	flagOutside:    "outside the reference's age range: no z-score",
	flagDegenerate: "the fitted centiles coincide at this age: no z-score",
}

type refView struct {
	Name, Measure, Unit, AgeUnit, Caution, Created string
	Source                                         string // file name the reference was loaded from, when known
	LMS                                            bool   // an LMS table, not fitted from data here
	StrataNames, Range                             string // all strata, the ages they cover together
	Strata                                         []stratumView
	Selected                                       bool
}

type stratumView struct {
	Name, Range string
	N           int
	LMSAges     int // tabulated ages of an LMS-table stratum; 0 for a fitted one
	Selected    bool
}

type rowView struct {
	N                             int
	Age, Measured, Value          string
	AgeErr, MeasuredErr, ValueErr string
}

type resultView struct {
	Visit                      int
	Age, Value, Z, Centile, Dz string
	// Growth is the conditional centile of the change since the previous
	// visit (curve.ScoreChanges), or "—"; GrowthNote says why it is blank.
	Growth, GrowthNote string
	Flags              []string
	Note               string
	Warn               bool
}

// pageData is what the page template shows.
type pageData struct {
	Refs       []refView
	Ref        refView
	Multi      bool // several references loaded
	Stratum    string
	StratumErr string
	Birth      string
	BirthErr   string
	RefErr     string
	Rows       []rowView
	Results    []resultView
	Scored     bool
	Growth     bool // the reference has a conditional model for the stratum: show growth centiles
	HasErrors  bool
	Latest     *resultView // the last scored visit, shown first
	Chart      template.HTML
	ChartSmall template.HTML // the chart drawn for phone screens
	ChartErr   string
	BatchErr   string
	Fail       string // the request failed on the server's side (status 500)
	Caution    string
}

// newPage returns the page for the reference called refName (the first one
// when the name is unknown or empty).
func (h *handler) newPage(refName string) *pageData {
	pd := &pageData{Multi: len(h.cat.refs) > 1}
	sel, err := h.cat.pick("ref", refName)
	if err != nil {
		sel = 0
		if strings.TrimSpace(refName) != "" {
			pd.RefErr = err.(*inputError).Msg
		}
	}
	for i, r := range h.cat.refs {
		v := refView{Name: h.cat.names[i], Measure: orDash(r.Measure), Unit: r.Unit, AgeUnit: describeAgeUnit(r.AgeUnit),
			Caution: cautionOf(r), Selected: i == sel}
		if !r.Created.IsZero() {
			v.Created = r.Created.UTC().Format("2006-01-02")
		}
		if i < len(h.cat.files) {
			v.Source = filepath.Base(h.cat.files[i])
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		var names []string
		for _, st := range r.Strata {
			sv := stratumView{Name: st.Name, N: st.N, Range: formatRange(st.AgeMin, st.AgeMax, r.AgeUnit)}
			if st.LMS != nil {
				sv.LMSAges, v.LMS = len(st.LMS.Ages), true
			}
			v.Strata = append(v.Strata, sv)
			lo, hi = math.Min(lo, st.AgeMin), math.Max(hi, st.AgeMax)
			names = append(names, cmp.Or(st.Name, "(one group)"))
		}
		v.StrataNames = strings.Join(names, ", ")
		if len(r.Strata) > 0 {
			v.Range = formatRange(lo, hi, r.AgeUnit)
		}
		pd.Refs = append(pd.Refs, v)
	}
	pd.Ref = pd.Refs[sel]
	pd.Caution = pd.Ref.Caution
	pd.Rows = []rowView{{N: 1}}
	return pd
}

func orDash(s string) string {
	if strings.TrimSpace(s) == "" {
		return "measurement"
	}
	return s
}

// handlePage shows the page; a GET with a query or a POST of the form also
// scores the child's visits, server-side, so the page works without script.
func (h *handler) handlePage(w http.ResponseWriter, r *http.Request) {
	if r.Method != http.MethodGet && r.Method != http.MethodHead && r.Method != http.MethodPost {
		w.Header().Set("Allow", "GET, HEAD, POST")
		http.Error(w, "growband: method not allowed", http.StatusMethodNotAllowed)
		return
	}
	if err := r.ParseForm(); err != nil {
		pd := h.newPage("")
		status := cmp.Or(bodyStatus(err), http.StatusBadRequest)
		pd.RefErr = "the form could not be read: " + err.Error()
		h.render(w, status, pd)
		return
	}
	f := r.Form
	for _, vs := range f {
		for i, v := range vs {
			// Shown again on the page: never raw bytes that are not UTF-8.
			vs[i] = strings.ToValidUTF8(v, "\uFFFD")
		}
	}
	pd := h.newPage(f.Get("ref"))
	ages, meas, vals := f["age"], f["measured"], f["value"]
	n := max(len(ages), len(meas), len(vals))
	at := func(s []string, i int) string {
		if i < len(s) {
			return strings.TrimSpace(s[i])
		}
		return ""
	}
	var rows []rowView
	for i := 0; i < n && len(rows) < maxVisits; i++ {
		rv := rowView{Age: at(ages, i), Measured: at(meas, i), Value: at(vals, i)}
		if rv.Age == "" && rv.Measured == "" && rv.Value == "" {
			continue
		}
		rows = append(rows, rv)
	}
	pd.Stratum = strings.TrimSpace(f.Get("stratum"))
	pd.Birth = strings.TrimSpace(f.Get("birth"))
	action := f.Get("do")
	if pd.RefErr == "" && action != "choose" && len(rows) > 0 {
		h.scorePage(pd, rows)
	} else {
		pd.Rows = rows
	}
	if action == "add" && len(pd.Rows) < maxVisits || len(pd.Rows) == 0 {
		pd.Rows = append(pd.Rows, rowView{})
	}
	for i := range pd.Rows {
		pd.Rows[i].N = i + 1
	}
	for i := range pd.Ref.Strata {
		pd.Ref.Strata[i].Selected = pd.Ref.Strata[i].Name == pd.Stratum
	}
	status := http.StatusOK
	switch {
	case pd.Fail != "":
		status = http.StatusInternalServerError
	case pd.HasErrors:
		status = http.StatusUnprocessableEntity
	}
	h.render(w, status, pd)
}

// scorePage scores the visit rows into pd, putting each problem beside its
// field, and draws the trajectory chart.
func (h *handler) scorePage(pd *pageData, rows []rowView) {
	ri, _ := h.cat.pick("ref", pd.Ref.Name)
	ref := h.cat.refs[ri]
	st, err := pickStratum("stratum", ref, pd.Stratum)
	if err != nil {
		pd.StratumErr = err.(*inputError).Msg
		pd.HasErrors = true
	}
	type scored struct {
		visit int
		res   result
	}
	var ok []scored
	for i := range rows {
		rv := &rows[i]
		m := &measurement{Reference: pd.Ref.Name, Stratum: pd.Stratum}
		var perr, aerr error
		if rv.Value == "" {
			perr = fieldErr("value", "enter the measurement in %s", unitOr(ref.Unit))
		} else {
			m.Value, perr = parseNumber("value", rv.Value)
		}
		switch {
		case rv.Age != "" && rv.Measured != "":
			aerr = fieldErr("age", "give the age or the visit date, not both")
		case rv.Age != "":
			m.HasAge = true
			m.Age, aerr = parseNumber("age", rv.Age)
		case rv.Measured != "" && pd.Birth == "":
			aerr = fieldErr("birth", "enter the birth date to compute ages from visit dates")
		case rv.Measured != "":
			m.Birth, m.Measured = pd.Birth, rv.Measured
		default:
			aerr = fieldErr("age", "enter the age in %s, or the visit date with a birth date", describeAgeUnit(ref.AgeUnit))
		}
		for _, e := range []error{aerr, perr} {
			if e != nil {
				h.placeError(pd, rv, e)
			}
		}
		if aerr != nil || perr != nil || st == nil {
			continue
		}
		res, err := h.cat.score(m, fields{Reference: "ref", Stratum: "stratum", Age: "age", Birth: "birth", Measured: "measured", Value: "value"})
		if err != nil {
			h.placeError(pd, rv, err)
			continue
		}
		ok = append(ok, scored{i + 1, res})
	}
	pd.Rows = rows
	if len(ok) == 0 {
		return
	}
	pd.Scored = true
	sort.SliceStable(ok, func(a, b int) bool { return ok[a].res.Age < ok[b].res.Age })
	var pts []point
	var prevZ *float64
	var audit []result
	for _, s := range ok {
		res := s.res
		audit = append(audit, res)
		v := resultView{Visit: s.visit, Age: trimNum(res.Age) + " " + describeAgeUnit(res.AgeUnit),
			Value: trimNum(res.Value) + unitSuffix(res.Unit), Note: res.Note, Z: "—", Centile: "—", Dz: "—"}
		for _, f := range res.Flags {
			v.Flags = append(v.Flags, flagText[f])
			if f == "implausible" || f == flagOutside {
				v.Warn = true
			}
		}
		if res.Z != nil {
			v.Z = fmtSigned(*res.Z, 2)
			v.Centile = fmtCentile(*res.Centile)
			if prevZ != nil {
				v.Dz = fmtSigned(*res.Z-*prevZ, 2)
			}
			z := *res.Z
			prevZ = &z
			pts = append(pts, point{Age: res.Age, Value: res.Value, Z: z})
		}
		pd.Results = append(pd.Results, v)
	}
	if err := h.audit.record("page", audit...); err != nil {
		pd.Fail, pd.Scored, pd.Results = err.Error(), false, nil
		return
	}
	if st.Conditional != nil {
		pd.Growth = true
		growth(ref, st, audit, pd.Results) // audit holds the results in the order of pd.Results
	}
	pd.Latest = &pd.Results[len(pd.Results)-1]
	big, err := chartSVG(ref, st, pts, pageChart)
	if err == nil {
		var small []byte
		small, err = chartSVG(ref, st, pts, phoneChart)
		pd.ChartSmall = template.HTML(inlineSVG(small)) // gonum's SVG writer escapes all text
	}
	if err != nil {
		pd.ChartErr = "the chart could not be drawn: " + err.Error()
		return
	}
	pd.Chart = template.HTML(inlineSVG(big))
}

// growth fills the conditional centile of each scored visit's change since
// the child's previous visit into views (one per result, same order): the
// visits of the page are one child's.
func growth(ref *curve.Reference, st *curve.Stratum, res []result, views []resultView) {
	d := &curve.Data{}
	var at []int
	for i, r := range res {
		if r.Z == nil {
			continue
		}
		d.Age, d.Value = append(d.Age, r.Age), append(d.Value, r.Value)
		d.Stratum, d.Subject = append(d.Stratum, st.Name), append(d.Subject, "child")
		at = append(at, i)
	}
	for i := range views {
		views[i].Growth = "—"
	}
	for j, s := range ref.ScoreChanges(d) {
		v := &views[at[j]]
		if s.Err != nil {
			v.GrowthNote = changeNote(s.Err)
			if !errors.Is(s.Err, curve.ErrNoPrevious) { // a first visit needs no remark
				v.Flags = append(v.Flags, "no growth centile: "+v.GrowthNote)
			}
			continue
		}
		v.Growth = fmtCentile(s.Centile)
	}
}

// placeError puts err beside the field it concerns on row rv.
func (h *handler) placeError(pd *pageData, rv *rowView, err error) {
	pd.HasErrors = true
	ie, ok := err.(*inputError)
	if !ok {
		rv.ValueErr = err.Error()
		return
	}
	switch ie.Field {
	case "age":
		rv.AgeErr = ie.Msg
	case "measured":
		rv.MeasuredErr = ie.Msg
	case "birth":
		pd.BirthErr = ie.Msg
	case "stratum":
		pd.StratumErr = ie.Msg
	case "ref":
		pd.RefErr = ie.Msg
	default:
		rv.ValueErr = ie.Msg
	}
}

func unitOr(u string) string {
	if strings.TrimSpace(u) == "" {
		return "the reference's unit"
	}
	return u
}

func unitSuffix(u string) string {
	if strings.TrimSpace(u) == "" {
		return ""
	}
	return " " + u
}

// fmtSigned writes x with a sign and the given decimals, using a true minus.
func fmtSigned(x float64, dec int) string {
	if math.Abs(x) < 0.5*math.Pow10(-dec) {
		x = 0
	}
	s := strconv.FormatFloat(math.Abs(x), 'f', dec, 64)
	switch {
	case x < 0:
		return "\u2212" + s
	case x > 0:
		return "+" + s
	}
	return s
}

// fmtCentile writes a centile with one decimal, more in the tails where one
// decimal would round to 0 or 100.
func fmtCentile(c float64) string {
	switch {
	case c < 0.1 || c > 99.9:
		return strconv.FormatFloat(c, 'f', 3, 64)
	}
	return strconv.FormatFloat(c, 'f', 1, 64)
}

func (h *handler) render(w http.ResponseWriter, status int, pd *pageData) {
	var buf bytes.Buffer
	if err := pageTemplate.Execute(&buf, pd); err != nil {
		h.logf("page template: %v", err)
		http.Error(w, "growband: internal error", http.StatusInternalServerError)
		return
	}
	b := buf.Bytes()
	if !utf8.Valid(b) {
		// A message quoting bytes of the request that are not UTF-8: the
		// page is declared UTF-8, so they are replaced, never sent raw.
		b = bytes.ToValidUTF8(b, []byte("\uFFFD"))
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(status)
	_, _ = w.Write(b)
}
