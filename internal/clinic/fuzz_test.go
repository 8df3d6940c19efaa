package clinic

import (
	"bytes"
	"encoding/csv"
	"errors"
	"net/http"
	"strings"
	"testing"
	"unicode/utf8"

	"growband/internal/csvsafe"
	"growband/internal/intake"
)

// FuzzScoreBody feeds arbitrary bodies to the score endpoint's reader and
// scorer: every failure must be an input error naming a field, never a panic;
// through the whole handler the answer is never a 5xx and always UTF-8.
func FuzzScoreBody(f *testing.F) {
	for _, s := range []string{
		`{"stratum":"F","age":12.5,"value":9.1}`,
		`[{"stratum":"M","birth":"2024-01-02","measured":"2025-01-02","value":9.1}]`,
		`{"reference":"weight","stratum":"F","age":-1e308,"value":1e308}`,
		`{"age":"x"}`, `[1,{}]`, `{`, `null`, `"x"`, `[[]]`, `{"value":1,"age":1} x`,
		`{"stratum":"F","age":1,"AGE":2,"value":3}`, `[{"value":1},{"value":1,"value":2}]`,
		`{"x":{"a":[{"b":1,"b":2}]}}`, "{\"stratum\":\"F\xff\",\"age\":1,\"value\":3}",
	} {
		f.Add([]byte(s))
	}
	h, _ := newTestHandler(f, Options{}, false)
	f.Fuzz(func(t *testing.T, data []byte) {
		rec := do(t, h, http.MethodPost, "/api/v1/score", "application/json", bytes.NewReader(data))
		if rec.Code >= 500 || !utf8.Valid(rec.Body.Bytes()) {
			t.Fatalf("%q: status %d, answer UTF-8 %v", data, rec.Code, utf8.Valid(rec.Body.Bytes()))
		}
		items, list, err := decodeScoreBody(bytes.NewReader(data))
		var ie *inputError
		if err != nil {
			if !errors.As(err, &ie) || ie.Field == "" {
				t.Fatalf("%q: error %v is not an input error naming a field", data, err)
			}
			return
		}
		for _, m := range items {
			prefix := ""
			if list {
				prefix = "[0]."
			}
			if _, err := h.cat.score(m, apiFields(prefix)); err != nil && !errors.As(err, &ie) {
				t.Fatalf("%q: score error %v is not an input error", data, err)
			}
		}
	})
}

// FuzzBatchCSV feeds arbitrary files to the batch scorer: the file written
// back is UTF-8 and no cell of it starts a spreadsheet formula.
func FuzzBatchCSV(f *testing.F) {
	for _, s := range []string{
		"stratum,age,value\nF,3,4.9\nM,x,1\n",
		"stratum;birth;measured;value\nF;2024-01-02;2025-01-02;7,9\n",
		"value,age,stratum\n\"1,2\",\"3\nF\n",
		"\ufeffage\tvalue\tstratum\n1\t2\tF\n",
		"", "value", "\x00",
		"child,stratum,age,value\n=1+1,F,7,6.3\n@x,F,-1,2\n\xff,F,7,6\n",
	} {
		f.Add([]byte(s))
	}
	h, _ := newTestHandler(f, Options{}, false)
	f.Fuzz(func(t *testing.T, data []byte) {
		var out bytes.Buffer
		job, err := h.startBatch("fuzz.csv", data, 0, &intake.Options{})
		var ie *inputError
		if err != nil && !errors.As(err, &ie) {
			t.Fatalf("%q: error %v is not an input error", data, err)
		}
		if err == nil {
			job.write(&out, func() {})
		}
		if !utf8.Valid(out.Bytes()) {
			t.Fatalf("%q: output is not UTF-8: %q", data, out.Bytes())
		}
		recs, err := csv.NewReader(bytes.NewReader(out.Bytes())).ReadAll()
		if err != nil {
			return // csv.Reader is stricter than intake about quotes; the cells are checked where it reads them
		}
		for _, rec := range recs {
			for _, c := range rec {
				if c != csvsafe.Cell(c) {
					t.Fatalf("%q: cell %q written unneutralised", data, c)
				}
			}
		}
	})
}

// FuzzPageForm posts arbitrary form bodies to the page.
func FuzzPageForm(f *testing.F) {
	for _, s := range []string{
		"stratum=F&age=3&value=4",
		"stratum=F&birth=2024-01-01&measured=2024-05-01&value=6&do=add",
		"ref=x&do=choose", "age=%zz", "value=1e999&age=NaN&stratum=M",
		"stratum=F%FF&age=7&value=\xff", "ref=%3Cscript%3E&stratum=F&age=1&value=2",
	} {
		f.Add(s)
	}
	h, _ := newTestHandler(f, Options{}, false)
	f.Fuzz(func(t *testing.T, form string) {
		rec := do(t, h, http.MethodPost, "/", "application/x-www-form-urlencoded", strings.NewReader(form))
		if rec.Code >= 500 || !utf8.Valid(rec.Body.Bytes()) {
			t.Fatalf("%q: status %d, page UTF-8 %v", form, rec.Code, utf8.Valid(rec.Body.Bytes()))
		}
	})
}
