package intake

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"reflect"
	"slices"
	"sort"
	"strings"
	"time"

	"github.com/BurntSushi/toml"
)

// raw holds one plan value as decoded by the TOML library, for checking by
// hand so that every message can name the key and its line.
type raw struct {
	v   any
	set bool
}

func (r *raw) UnmarshalTOML(v any) error {
	r.v, r.set = v, true
	return nil
}

// rawPlan mirrors the plan file. Its toml tags are the complete list of
// keys; any other key is an error.
type rawPlan struct {
	Input     rawInput     `toml:"input"`
	Measure   rawMeasure   `toml:"measure"`
	Fit       rawFit       `toml:"fit"`
	Plausible rawPlausible `toml:"plausible"`
	Table     rawTable     `toml:"table"`
	Output    rawOutput    `toml:"output"`

	Conditional rawConditional `toml:"conditional"`
	Covariates  rawCovariates  `toml:"covariates"`
}

type rawInput struct {
	File         raw `toml:"file"`
	Age          raw `toml:"age"`
	Birth        raw `toml:"birth"`
	Measured     raw `toml:"measured"`
	Value        raw `toml:"value"`
	Stratum      raw `toml:"stratum"`
	Subject      raw `toml:"subject"`
	Weight       raw `toml:"weight"`
	Unit         raw `toml:"unit"`
	Delimiter    raw `toml:"delimiter"`
	Decimal      raw `toml:"decimal"`
	Missing      raw `toml:"missing"`
	DateFormat   raw `toml:"date_format"`
	StratumCodes raw `toml:"stratum_codes"`
	Sheet        raw `toml:"sheet"`
}

type rawMeasure struct {
	Name    raw `toml:"name"`
	Unit    raw `toml:"unit"`
	AgeUnit raw `toml:"age_unit"`
}

type rawFit struct {
	Centiles  raw `toml:"centiles"`
	Knots     raw `toml:"knots"`
	Penalty   raw `toml:"penalty"`
	AgeScale  raw `toml:"age_scale"`
	AgeOffset raw `toml:"age_offset"`
	AgeRange  raw `toml:"age_range"`
	AcceptEdg raw `toml:"accept_edge_problems"`
	Bootstrap raw `toml:"bootstrap"`
	Seed      raw `toml:"seed"`
}

type rawPlausible struct {
	Value raw `toml:"value"`
	Age   raw `toml:"age"`
	Z     raw `toml:"z"`
}

type rawTable struct {
	From raw `toml:"from"`
	To   raw `toml:"to"`
	Step raw `toml:"step"`
}

type rawOutput struct {
	Charts raw `toml:"charts"`
	Points raw `toml:"points"`
	SD     raw `toml:"sd_curves"`
}

// planKeys lists the known tables and keys ("input", "input.file", ...),
// read from rawPlan's tags; mapKeys are keys whose value is a free-form table.
var (
	planKeys = knownKeys()
	mapKeys  = map[string]bool{"input.stratum_codes": true}
)

func knownKeys() map[string]bool {
	keys := map[string]bool{}
	t := reflect.TypeFor[rawPlan]()
	for i := range t.NumField() {
		table := t.Field(i)
		tn := table.Tag.Get("toml")
		keys[tn] = true
		for j := range table.Type.NumField() {
			keys[tn+"."+table.Type.Field(j).Tag.Get("toml")] = true
		}
	}
	return keys
}

// ParsePlan parses a plan from data. name is used in messages (usually the
// file path) and dir is the directory input.file is resolved against.
//
// Every problem found is reported, each as an *Error "name:line: message"
// wrapping ErrSyntax, ErrUnknownKey, ErrType or ErrPlanValue; several are
// joined with errors.Join, in line order. ParsePlan does not panic on any
// input.
func ParsePlan(data []byte, name, dir string) (*Plan, error) {
	data = bytes.TrimPrefix(data, []byte{0xEF, 0xBB, 0xBF})
	text := string(data)
	var tree map[string]any
	if _, err := toml.Decode(text, &tree); err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, errAt(name, syntaxLine(data, pe.Position), ErrSyntax, "%s", pe.Message)
		}
		return nil, errAt(name, 0, ErrSyntax, "%v", err)
	}
	d := &planDecoder{name: name, lines: keyLines(text)}
	_, d.hasConditional = tree["conditional"]
	_, d.hasCovariates = tree["covariates"]
	for tn, v := range tree {
		if _, isTable := v.(map[string]any); planKeys[tn] && !isTable {
			d.fail(tn, ErrType, "%s must be a table like [%s], not %s", tn, tn, describe(v))
		}
	}
	if d.errs != nil {
		return nil, d.result()
	}
	var rp rawPlan
	md, err := toml.Decode(text, &rp)
	if err != nil {
		return nil, errAt(name, 0, ErrType, "%v", err)
	}
	d.unknown(md)
	p := d.plan(&rp)
	if err := d.result(); err != nil {
		return nil, err
	}
	p.Name, p.Dir = name, dir
	if !filepath.IsAbs(p.Input.File) {
		p.Input.File = filepath.Join(dir, p.Input.File)
	}
	return p, nil
}

// syntaxLine is the line of a TOML syntax error, counted from its byte
// offset: the library counts an error at a line's newline as on the next line.
func syntaxLine(data []byte, pos toml.Position) int {
	if pos.Start < 0 || pos.Start > len(data) {
		return pos.Line
	}
	return 1 + bytes.Count(data[:pos.Start], []byte{'\n'})
}

// planDecoder collects plan errors with their lines.
type planDecoder struct {
	name  string
	lines map[string]int
	errs  []*Error

	hasConditional bool // the plan has a [conditional] table
	hasCovariates  bool // the plan has a [covariates] table
}

func (d *planDecoder) fail(key string, sentinel error, format string, args ...any) {
	d.errs = append(d.errs, errAt(d.name, lineOf(d.lines, key), sentinel, format, args...))
}

func (d *planDecoder) result() error {
	if len(d.errs) == 0 {
		return nil
	}
	sort.SliceStable(d.errs, func(i, j int) bool { return d.errs[i].Line < d.errs[j].Line })
	if len(d.errs) == 1 {
		return d.errs[0]
	}
	errs := make([]error, len(d.errs))
	for i, e := range d.errs {
		errs[i] = e
	}
	return errors.Join(errs...)
}

// unknown reports keys the plan does not know: those the decoder left
// undecoded, and those matched only ignoring case (the TOML library matches
// struct fields case-insensitively). Keys under a reported key are skipped.
func (d *planDecoder) unknown(md toml.MetaData) {
	bad := map[string]bool{}
	var order []string
	note := func(k toml.Key) {
		key := strings.Join(k, ".")
		for j := 1; j < len(k); j++ {
			p := strings.Join(k[:j], ".")
			// Below a known leaf key is a value of the wrong type, reported
			// as such.
			if bad[p] || mapKeys[p] || (planKeys[p] && j > 1) {
				return
			}
		}
		if !bad[key] {
			bad[key] = true
			order = append(order, key)
		}
	}
	for _, k := range md.Undecoded() {
		note(k)
	}
	for _, k := range md.Keys() {
		if key := strings.Join(k, "."); !planKeys[key] {
			note(k)
		}
	}
	for _, key := range order {
		msg := fmt.Sprintf("unknown key %q", key)
		if s := suggest(key); s != "" {
			msg += fmt.Sprintf(" (did you mean %q?)", s)
		}
		d.fail(key, ErrUnknownKey, "%s", msg)
	}
}

// suggest returns the known key closest to key in edit distance, if close.
func suggest(key string) string {
	best, bestD := "", 3 // at most two edits away (common practice for typo hints)
	for k := range planKeys {
		if dd := editDistance(strings.ToLower(key), k); dd < bestD || (dd == bestD && k < best) {
			best, bestD = k, dd
		}
	}
	return best
}

func editDistance(a, b string) int {
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			c := prev[j-1]
			if a[i-1] != b[j-1] {
				c++
			}
			cur[j] = min(c, prev[j]+1, cur[j-1]+1)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}

// describe names a TOML value's type and shows short values, for messages.
func describe(v any) string {
	switch x := v.(type) {
	case string:
		if len(x) > 40 {
			x = x[:40] + "..."
		}
		return fmt.Sprintf("the string %q", x)
	case int64:
		return fmt.Sprintf("the integer %d", x)
	case float64:
		return fmt.Sprintf("the number %g", x)
	case bool:
		return fmt.Sprintf("the boolean %t", x)
	case []any:
		return "an array"
	case []map[string]any:
		return "an array of tables"
	case map[string]any:
		return "a table"
	case time.Time:
		return "a date-time"
	}
	return fmt.Sprintf("a %T", v)
}

// The typed readers below record an ErrType error and return ok = false
// when the value has the wrong type.

func (d *planDecoder) str(key string, r raw) (string, bool) {
	s, ok := r.v.(string)
	if !ok {
		d.fail(key, ErrType, "%s: want a string, got %s", key, describe(r.v))
	}
	return s, ok
}

// number accepts integers and floats.
func number(v any) (float64, bool) {
	switch x := v.(type) {
	case int64:
		return float64(x), true
	case float64:
		return x, true
	}
	return 0, false
}

func (d *planDecoder) num(key string, r raw) (float64, bool) {
	x, ok := number(r.v)
	if !ok {
		d.fail(key, ErrType, "%s: want a number, got %s", key, describe(r.v))
	} else if math.IsNaN(x) || math.IsInf(x, 0) {
		d.fail(key, ErrPlanValue, "%s: want a finite number, got %g", key, x)
		ok = false
	}
	return x, ok
}

// whole accepts integers and floats with no fractional part.
func whole(v any) (int64, bool) {
	switch x := v.(type) {
	case int64:
		return x, true
	case float64:
		if x == math.Trunc(x) && math.Abs(x) < 1<<53 {
			return int64(x), true
		}
	}
	return 0, false
}

func (d *planDecoder) int(key string, r raw, lo, hi int64) (int64, bool) {
	n, ok := whole(r.v)
	if !ok {
		d.fail(key, ErrType, "%s: want a whole number, got %s", key, describe(r.v))
		return 0, false
	}
	if n < lo || n > hi {
		d.fail(key, ErrPlanValue, "%s: %d is outside [%d, %d]", key, n, lo, hi)
		return 0, false
	}
	return n, true
}

func (d *planDecoder) boolean(key string, r raw) (bool, bool) {
	b, ok := r.v.(bool)
	if !ok {
		d.fail(key, ErrType, "%s: want true or false, got %s", key, describe(r.v))
	}
	return b, ok
}

func (d *planDecoder) strList(key string, r raw) ([]string, bool) {
	arr, ok := r.v.([]any)
	if !ok {
		d.fail(key, ErrType, "%s: want an array of strings, got %s", key, describe(r.v))
		return nil, false
	}
	out := make([]string, len(arr))
	for i, v := range arr {
		if out[i], ok = v.(string); !ok {
			d.fail(key, ErrType, "%s: item %d: want a string, got %s", key, i+1, describe(v))
			return nil, false
		}
	}
	return out, true
}

func (d *planDecoder) numList(key string, v any) ([]float64, bool) {
	arr, ok := v.([]any)
	if !ok {
		d.fail(key, ErrType, "%s: want an array of numbers, got %s", key, describe(v))
		return nil, false
	}
	out := make([]float64, len(arr))
	for i, v := range arr {
		if out[i], ok = number(v); !ok {
			d.fail(key, ErrType, "%s: item %d: want a number, got %s", key, i+1, describe(v))
			return nil, false
		}
		if math.IsNaN(out[i]) {
			d.fail(key, ErrPlanValue, "%s: item %d is nan", key, i+1)
			return nil, false
		}
	}
	return out, true
}

// oneOf checks a string value against the allowed words.
func (d *planDecoder) oneOf(key string, r raw, words ...string) (string, bool) {
	s, ok := d.str(key, r)
	if !ok {
		return "", false
	}
	if !slices.Contains(words, s) {
		d.fail(key, ErrPlanValue, "%s: %q is not one of %s", key, s, quoteAll(words))
		return "", false
	}
	return s, true
}

func quoteAll(words []string) string {
	q := make([]string, len(words))
	for i, w := range words {
		q[i] = fmt.Sprintf("%q", w)
	}
	return strings.Join(q, ", ")
}

// rangeVal reads [min, max] (±inf allowed) or "none".
func (d *planDecoder) rangeVal(key string, r raw) (Range, bool) {
	if s, isStr := r.v.(string); isStr {
		if s == "none" {
			return Range{}, true
		}
		d.fail(key, ErrPlanValue, "%s: want [min, max] or \"none\", got %s", key, describe(r.v))
		return Range{}, false
	}
	xs, ok := d.numList(key, r.v)
	if !ok {
		return Range{}, false
	}
	if len(xs) != 2 || !(xs[0] < xs[1]) {
		d.fail(key, ErrPlanValue, "%s: want [min, max] with min < max", key)
		return Range{}, false
	}
	return Range{Min: xs[0], Max: xs[1]}, true
}
