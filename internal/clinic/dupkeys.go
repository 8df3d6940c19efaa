package clinic

import (
	"bytes"
	"encoding/json"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// duplicateKey returns the path of the first key that occurs twice in one
// object of the JSON text raw, at any depth ("[2].age", "a.b"), and whether
// there is one. Keys are compared as encoding/json matches them to struct
// fields, without regard to case ("age" and "AGE" are the same key), since
// either could otherwise silently win. raw must be valid JSON (json.Valid);
// the function reports nothing for text it cannot tokenise.
func duplicateKey(raw []byte) (string, bool) {
	// A repeated key takes two keys, so two colons: a text with fewer has
	// none and is not tokenised.
	if bytes.Count(raw, []byte(":")) < 2 {
		return "", false
	}
	type frame struct {
		obj     bool
		keys    map[string]bool
		wantKey bool
		key     string // current key of an object
		idx     int    // current index of an array
	}
	path := func(stack []frame) string {
		var b strings.Builder
		for _, f := range stack {
			if f.obj {
				if b.Len() > 0 {
					b.WriteByte('.')
				}
				if f.key == "" {
					b.WriteString(`""`) // the empty key, named so
				} else {
					b.WriteString(f.key)
				}
			} else {
				b.WriteString("[" + strconv.Itoa(f.idx) + "]")
			}
		}
		return b.String()
	}
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.UseNumber()
	var stack []frame
	// value notes that a value (scalar or a closed container) was read in
	// the top frame.
	value := func() {
		if n := len(stack); n > 0 {
			if stack[n-1].obj {
				stack[n-1].wantKey = true
			}
		}
	}
	for {
		tok, err := dec.Token()
		if err != nil {
			return "", false
		}
		if n := len(stack); n > 0 && stack[n-1].obj && stack[n-1].wantKey {
			if d, ok := tok.(json.Delim); ok && d == '}' {
				stack = stack[:n-1]
				value()
				if len(stack) == 0 {
					return "", false
				}
				continue
			}
			k, _ := tok.(string)
			f := &stack[n-1]
			f.key, f.wantKey = k, false
			fk := foldKey(k)
			if f.keys[fk] {
				return path(stack), true
			}
			f.keys[fk] = true
			continue
		}
		if n := len(stack); n > 0 && !stack[n-1].obj {
			if d, ok := tok.(json.Delim); !ok || d != ']' {
				stack[n-1].idx++
			}
		}
		switch tok {
		case json.Delim('{'):
			stack = append(stack, frame{obj: true, keys: map[string]bool{}, wantKey: true})
			continue
		case json.Delim('['):
			stack = append(stack, frame{idx: -1})
			continue
		case json.Delim(']'):
			stack = stack[:len(stack)-1]
		}
		value()
		if len(stack) == 0 {
			return "", false
		}
	}
}

// foldKey folds a key as encoding/json does when it matches a field name:
// each rune to the upper case of its lower case (so "ſ" matches "s" and
// the Kelvin sign "k").
func foldKey(k string) string {
	ascii := true
	for i := 0; i < len(k); i++ {
		if k[i] >= utf8.RuneSelf {
			ascii = false
			break
		}
	}
	if ascii {
		return strings.ToUpper(k)
	}
	return strings.Map(func(r rune) rune { return unicode.ToUpper(unicode.ToLower(r)) }, k)
}
