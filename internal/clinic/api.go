package clinic

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"strconv"
	"strings"
	"time"

	"growband/curve"
)

// bodyField names the request body as a whole in errors that concern no
// single field.
const bodyField = "body"

// errorBody is the JSON answer to a bad request.
type errorBody struct {
	Error string `json:"error"`
	Field string `json:"field"`
}

func writeJSON(w http.ResponseWriter, status int, v any) {
	w.Header().Set("Content-Type", "application/json; charset=utf-8")
	w.WriteHeader(status)
	enc := json.NewEncoder(w)
	enc.SetEscapeHTML(false)
	_ = enc.Encode(v) // the client may have gone; nothing to do about it
}

func writeAPIError(w http.ResponseWriter, status int, field, msg string) {
	writeJSON(w, status, errorBody{Error: msg, Field: field})
}

// writeInputError answers err: an *inputError as 400 naming its field,
// an oversized body as 413, a body too slow as 408, a failed audit log as
// 500, anything else as 400 about the body.
func writeInputError(w http.ResponseWriter, err error) {
	var ie *inputError
	var mb *http.MaxBytesError
	switch {
	case errors.As(err, &mb):
		writeAPIError(w, http.StatusRequestEntityTooLarge, bodyField,
			fmt.Sprintf("request body is larger than the limit of %d bytes", mb.Limit))
	case errors.Is(err, errSlowBody):
		writeAPIError(w, http.StatusRequestTimeout, bodyField, err.Error())
	case errors.Is(err, errAudit):
		writeAuditError(w, err)
	case errors.As(err, &ie):
		writeAPIError(w, http.StatusBadRequest, ie.Field, ie.Msg)
	default:
		writeAPIError(w, http.StatusBadRequest, bodyField, err.Error())
	}
}

// allow answers 405 unless r uses one of the methods.
func allow(w http.ResponseWriter, r *http.Request, methods ...string) bool {
	for _, m := range methods {
		if r.Method == m {
			return true
		}
	}
	w.Header().Set("Allow", strings.Join(methods, ", "))
	writeAPIError(w, http.StatusMethodNotAllowed, "method", r.Method+" is not allowed here; use "+strings.Join(methods, " or "))
	return false
}

// itemJSON is one measurement of a score request. Pointers tell a missing
// field (or null) from a zero.
type itemJSON struct {
	Reference *string  `json:"reference"`
	Stratum   *string  `json:"stratum"`
	Age       *float64 `json:"age"`
	Birth     *string  `json:"birth"`
	Measured  *string  `json:"measured"`
	Value     *float64 `json:"value"`
	Child     *string  `json:"child"`
}

// decodeError turns an encoding/json error into an *inputError naming the
// field, prefix being the item's place in a list ("[3]." or "").
func decodeError(err error, prefix string) error {
	var te *json.UnmarshalTypeError
	var se *json.SyntaxError
	var mb *http.MaxBytesError
	switch {
	case errors.As(err, &mb):
		return err
	case errors.As(err, &te):
		field := te.Field
		if field == "" {
			return fieldErr(strings.TrimSuffix(prefix, ".")+orBody(prefix), "must be a JSON object, not %s", te.Value)
		}
		want := "a string"
		if field == "age" || field == "value" {
			want = "a number"
		}
		return fieldErr(prefix+field, "must be %s, not %s", want, te.Value)
	case errors.As(err, &se):
		return fieldErr(bodyField, "malformed JSON at byte %d: %v", se.Offset, se)
	case errors.Is(err, io.ErrUnexpectedEOF), errors.Is(err, io.EOF):
		return fieldErr(bodyField, "JSON is truncated or empty")
	}
	if name, ok := strings.CutPrefix(err.Error(), "json: unknown field "); ok {
		if u, err := strconv.Unquote(name); err == nil && u != "" {
			name = u
		}
		return fieldErr(prefix+name, "unknown field; known: reference, stratum, age, birth, measured, value, child")
	}
	return fieldErr(bodyField, "%v", err)
}

func orBody(prefix string) string {
	if prefix == "" {
		return bodyField
	}
	return ""
}

// decodeItem reads one measurement from raw JSON.
func decodeItem(raw []byte, prefix string) (*measurement, error) {
	var it itemJSON
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&it); err != nil {
		return nil, decodeError(err, prefix)
	}
	m := &measurement{}
	if it.Reference != nil {
		m.Reference = *it.Reference
	}
	if it.Stratum != nil {
		m.Stratum = *it.Stratum
	}
	if it.Child != nil {
		m.Child = *it.Child
	}
	if it.Value == nil {
		return nil, fieldErr(prefix+"value", "missing: the measurement is required")
	}
	m.Value = *it.Value
	switch {
	case it.Age != nil && (it.Birth != nil || it.Measured != nil):
		return nil, fieldErr(prefix+"age", "give either age or birth and measured dates, not both")
	case it.Age != nil:
		m.HasAge, m.Age = true, *it.Age
	case it.Birth == nil && it.Measured == nil:
		return nil, fieldErr(prefix+"age", "missing: give age, or birth and measured dates")
	case it.Birth == nil:
		return nil, fieldErr(prefix+"birth", "missing: measured is given, so the birth date is needed")
	case it.Measured == nil:
		return nil, fieldErr(prefix+"measured", "missing: birth is given, so the date measured is needed")
	default:
		m.Birth, m.Measured = *it.Birth, *it.Measured
	}
	return m, nil
}

// decodeScoreBody reads a score request: one object, or an array of them.
func decodeScoreBody(body io.Reader) (items []*measurement, list bool, err error) {
	raw, err := io.ReadAll(body)
	if err != nil {
		if bodyStatus(err) != 0 {
			return nil, false, err
		}
		return nil, false, fieldErr(bodyField, "%v", err)
	}
	valid := json.Valid(raw)
	if valid {
		if key, dup := duplicateKey(raw); dup {
			return nil, false, fieldErr(key, "given twice (keys are matched without regard to case); give each field once")
		}
	}
	// The common request, one well-formed object, is decoded once; anything
	// else takes the slower path that names what is wrong.
	if t := bytes.TrimSpace(raw); valid && len(t) > 0 && t[0] == '{' {
		m, err := decodeItem(t, "")
		if err != nil {
			return nil, false, err
		}
		return []*measurement{m}, false, nil
	}
	dec := json.NewDecoder(bytes.NewReader(raw))
	var value json.RawMessage
	if err := dec.Decode(&value); err != nil {
		return nil, false, decodeError(err, "")
	}
	if _, err := dec.Token(); err != io.EOF {
		return nil, false, fieldErr(bodyField, "data after the JSON value")
	}
	trimmed := bytes.TrimSpace(value)
	switch {
	case len(trimmed) > 0 && trimmed[0] == '{':
		m, err := decodeItem(trimmed, "")
		if err != nil {
			return nil, false, err
		}
		return []*measurement{m}, false, nil
	case len(trimmed) > 0 && trimmed[0] == '[':
		var raws []json.RawMessage
		if err := json.Unmarshal(trimmed, &raws); err != nil {
			return nil, true, decodeError(err, "")
		}
		if len(raws) == 0 {
			return nil, true, fieldErr(bodyField, "the list holds no measurements")
		}
		items = make([]*measurement, len(raws))
		for i, r := range raws {
			if items[i], err = decodeItem(r, "["+strconv.Itoa(i)+"]."); err != nil {
				return nil, true, err
			}
		}
		return items, true, nil
	}
	return nil, false, fieldErr(bodyField, "must be a JSON object or an array of objects")
}

// handleScore is POST /api/v1/score.
func (h *handler) handleScore(w http.ResponseWriter, r *http.Request) {
	if !allow(w, r, http.MethodPost) {
		return
	}
	if !isJSON(r.Header.Get("Content-Type")) {
		writeAPIError(w, http.StatusUnsupportedMediaType, ctypeField,
			"send the measurements as JSON with Content-Type: application/json")
		return
	}
	items, list, err := decodeScoreBody(r.Body)
	if err != nil {
		writeInputError(w, err)
		return
	}
	out := make([]result, len(items))
	for i, m := range items {
		prefix := ""
		if list {
			prefix = "[" + strconv.Itoa(i) + "]."
		}
		if out[i], err = h.cat.score(m, apiFields(prefix)); err != nil {
			writeInputError(w, err)
			return
		}
	}
	h.cat.addChanges(items, out)
	if err := h.audit.record("api", out...); err != nil {
		writeAuditError(w, err)
		return
	}
	if list {
		writeJSON(w, http.StatusOK, out)
		return
	}
	writeJSON(w, http.StatusOK, out[0])
}

// refJSON describes a loaded reference.
type refJSON struct {
	Name     string        `json:"name"`
	Measure  string        `json:"measure"`
	Unit     string        `json:"unit"`
	AgeUnit  string        `json:"age_unit"`
	Created  time.Time     `json:"created"`
	Caution  string        `json:"caution"`
	Strata   []stratumJSON `json:"strata"`
	Checksum string        `json:"input_hash,omitempty"`
}

type stratumJSON struct {
	Name     string    `json:"name"`
	N        int       `json:"n"`
	AgeMin   float64   `json:"age_min"`
	AgeMax   float64   `json:"age_max"`
	Centiles []float64 `json:"centiles"`
}

func describe(name string, r *curve.Reference) refJSON {
	d := refJSON{Name: name, Measure: r.Measure, Unit: r.Unit, AgeUnit: r.AgeUnit, Created: r.Created,
		Caution: cautionOf(r), Checksum: r.InputHash, Strata: make([]stratumJSON, len(r.Strata))}
	for i, st := range r.Strata {
		c := make([]float64, len(st.Chart))
		for j, t := range st.Chart {
			c[j] = roundCentile(100 * t)
		}
		d.Strata[i] = stratumJSON{Name: st.Name, N: st.N, AgeMin: st.AgeMin, AgeMax: st.AgeMax, Centiles: c}
	}
	return d
}

// roundCentile removes the binary noise of 100*tau (0.97*100 = 97.00000000000001).
func roundCentile(c float64) float64 {
	v, _ := strconv.ParseFloat(strconv.FormatFloat(c, 'f', 6, 64), 64)
	return v
}

func cautionOf(r *curve.Reference) string {
	if strings.TrimSpace(r.Caution) != "" {
		return r.Caution
	}
	return curve.Caution
}

// handleReferences is GET /api/v1/references.
func (h *handler) handleReferences(w http.ResponseWriter, r *http.Request) {
	if !allow(w, r, http.MethodGet, http.MethodHead) {
		return
	}
	out := struct {
		References []refJSON `json:"references"`
	}{make([]refJSON, len(h.cat.refs))}
	for i, ref := range h.cat.refs {
		out.References[i] = describe(h.cat.names[i], ref)
	}
	writeJSON(w, http.StatusOK, out)
}

// handleChart is GET /api/v1/chart.svg?reference=..&stratum=..&age=..&value=..
func (h *handler) handleChart(w http.ResponseWriter, r *http.Request) {
	if !allow(w, r, http.MethodGet, http.MethodHead) {
		return
	}
	q := r.URL.Query()
	for k := range q {
		switch k {
		case "reference", "stratum", "age", "value":
		default:
			writeAPIError(w, http.StatusBadRequest, k, "unknown parameter; known: reference, stratum, age, value")
			return
		}
	}
	i, err := h.cat.pick("reference", q.Get("reference"))
	if err != nil {
		writeInputError(w, err)
		return
	}
	ref := h.cat.refs[i]
	st, err := pickStratum("stratum", ref, q.Get("stratum"))
	if err != nil {
		writeInputError(w, err)
		return
	}
	ages, values := q["age"], q["value"]
	if len(ages) != len(values) {
		writeAPIError(w, http.StatusBadRequest, "value", fmt.Sprintf("%d ages but %d values: give them in pairs", len(ages), len(values)))
		return
	}
	var pts []point
	for k := range ages {
		a, err := parseNumber("age", ages[k])
		if err != nil {
			writeInputError(w, err)
			return
		}
		v, err := parseNumber("value", values[k])
		if err != nil {
			writeInputError(w, err)
			return
		}
		if a < st.AgeMin || a > st.AgeMax {
			writeAPIError(w, http.StatusBadRequest, "age", fmt.Sprintf("age %s is outside the reference's range, %s",
				trimNum(a), formatRange(st.AgeMin, st.AgeMax, ref.AgeUnit)))
			return
		}
		s, err := ref.Score(st.Name, a, v)
		if err != nil {
			writeAPIError(w, http.StatusBadRequest, "value", err.Error())
			return
		}
		pts = append(pts, point{Age: a, Value: v, Z: s.Z})
	}
	svg, err := chartSVG(ref, st, pts, apiChart)
	if err != nil {
		writeAPIError(w, http.StatusBadRequest, "age", err.Error())
		return
	}
	if len(pts) > 0 {
		if err := h.audit.recordChart(h.cat.names[i], st.Name, pts); err != nil {
			writeAuditError(w, err)
			return
		}
	}
	w.Header().Set("Content-Type", "image/svg+xml")
	w.Header().Set("Content-Length", strconv.Itoa(len(svg)))
	_, _ = w.Write(svg)
}
