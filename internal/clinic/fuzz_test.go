package clinic

import (
	"bytes"
	"errors"
	"io"
	"net/http"
	"strings"
	"testing"

	"growband/internal/intake"
)

// FuzzScoreBody feeds arbitrary bodies to the score endpoint's reader and
// scorer: every failure must be an input error naming a field, never a panic.
func FuzzScoreBody(f *testing.F) {
	for _, s := range []string{
		`{"stratum":"F","age":12.5,"value":9.1}`,
		`[{"stratum":"M","birth":"2024-01-02","measured":"2025-01-02","value":9.1}]`,
		`{"reference":"weight","stratum":"F","age":-1e308,"value":1e308}`,
		`{"age":"x"}`, `[1,{}]`, `{`, `null`, `"x"`, `[[]]`, `{"value":1,"age":1} x`,
	} {
		f.Add([]byte(s))
	}
	h, _ := newTestHandler(f, Options{}, false)
	f.Fuzz(func(t *testing.T, data []byte) {
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

// FuzzBatchCSV feeds arbitrary files to the batch scorer.
func FuzzBatchCSV(f *testing.F) {
	for _, s := range []string{
		"stratum,age,value\nF,3,4.9\nM,x,1\n",
		"stratum;birth;measured;value\nF;2024-01-02;2025-01-02;7,9\n",
		"value,age,stratum\n\"1,2\",\"3\nF\n",
		"\ufeffage\tvalue\tstratum\n1\t2\tF\n",
		"", "value", "\x00",
	} {
		f.Add([]byte(s))
	}
	h, _ := newTestHandler(f, Options{}, false)
	f.Fuzz(func(t *testing.T, data []byte) {
		job, err := h.startBatch("fuzz.csv", data, 0, &intake.Options{})
		var ie *inputError
		if err != nil && !errors.As(err, &ie) {
			t.Fatalf("%q: error %v is not an input error", data, err)
		}
		if err == nil {
			job.write(io.Discard)
		}
	})
}

// FuzzPageForm posts arbitrary form bodies to the page.
func FuzzPageForm(f *testing.F) {
	for _, s := range []string{
		"stratum=F&age=3&value=4",
		"stratum=F&birth=2024-01-01&measured=2024-05-01&value=6&do=add",
		"ref=x&do=choose", "age=%zz", "value=1e999&age=NaN&stratum=M",
	} {
		f.Add(s)
	}
	h, _ := newTestHandler(f, Options{}, false)
	f.Fuzz(func(t *testing.T, form string) {
		rec := do(t, h, http.MethodPost, "/", "application/x-www-form-urlencoded", strings.NewReader(form))
		if rec.Code >= 500 {
			t.Fatalf("%q: status %d", form, rec.Code)
		}
	})
}
