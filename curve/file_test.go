package curve

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

// fileRef is twoStrata with the optional parts filled in, so the file
// carries every field.
func fileRef() *Reference {
	r := twoStrata()
	r.Created = time.Date(2024, 5, 6, 7, 8, 9, 123456789, time.FixedZone("", 3600))
	r.InputHash = strings.Repeat("ab", 32)
	r.Strata[0].Flags = []Flag{{Tau: 0.005, AgeLo: 0, AgeHi: 2.4, Expected: 1.7, Action: "flagged"}}
	r.Strata[1].Bands = []Band{{Tau: 0.5, Ages: []float64{1, 2}, Lo: []float64{4, 5}, Hi: []float64{4.5, 5.6}, BiasToSE: []float64{0.1, -0.2}}}
	r.Strata[1].Smoothness = Smoothness{InteriorKnots: 2, Lambda: 0.37, Order: 2, Criterion: "sic", Score: -123.25}
	return r
}

func saved(t testing.TB, r *Reference) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := Save(&buf, r); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func TestFileRoundTrip(t *testing.T) {
	r := fileRef()
	data := saved(t, r)
	got, err := Load(bytes.NewReader(data), "ref.json")
	if err != nil {
		t.Fatal(err)
	}
	// Saving what was loaded gives the same bytes: nothing lost or changed.
	if again := saved(t, got); !bytes.Equal(again, data) {
		t.Errorf("re-saved file differs")
	}
	if !got.Created.Equal(r.Created) || got.Strata[0].Flags[0] != r.Strata[0].Flags[0] {
		t.Errorf("fields changed: %v %v", got.Created, got.Strata[0].Flags)
	}
	// Identical scores, bit for bit, on many rows.
	rng := rand.New(rand.NewPCG(9, 10))
	for range 20000 {
		name := []string{"F", "M"}[rng.IntN(2)]
		age := 0.5 + rng.Float64()*23.5
		v := 4 + 2.2*math.Log(age+1) + rng.NormFloat64()*3
		a, err1 := r.Score(name, age, v)
		b, err2 := got.Score(name, age, v)
		if a != b || (err1 == nil) != (err2 == nil) {
			t.Fatalf("%s %g %g: %+v %v vs loaded %+v %v", name, age, v, a, err1, b, err2)
		}
	}
	// The loaded reference is prepared; the original is not changed by Save.
	if got.Strata[0].basis == nil || r.Strata[0].basis != nil {
		t.Errorf("basis cache: loaded %v, original %v", got.Strata[0].basis, r.Strata[0].basis)
	}
	if r.Format != FormatName || r.Version != FormatVersion {
		t.Errorf("Save modified its argument")
	}
}

func TestFileLayout(t *testing.T) {
	r := fileRef()
	r.Format, r.Version = "", 0 // Save writes them regardless
	data := saved(t, r)
	var m map[string]json.RawMessage
	if err := json.Unmarshal(data, &m); err != nil {
		t.Fatal(err)
	}
	if string(m["format"]) != `"growband-reference"` || string(m["version"]) != strconv.Itoa(FormatVersion) {
		t.Errorf("format %s version %s", m["format"], m["version"])
	}
	if !bytes.HasPrefix(data, []byte(fmt.Sprintf("{\n  \"format\": \"growband-reference\",\n  \"version\": %d,", FormatVersion))) {
		t.Errorf("file does not start with format and version:\n%.80s", data)
	}
	if !bytes.Contains(data, []byte("\n  \"checksum\": \"sha256:")) || !bytes.HasSuffix(data, []byte("\"\n}\n")) {
		t.Errorf("no trailing checksum field:\n%s", data[len(data)-100:])
	}
	// Layout does not matter: the compact form loads too.
	var compact bytes.Buffer
	if err := json.Compact(&compact, data); err != nil {
		t.Fatal(err)
	}
	if _, err := Load(&compact, "compact.json"); err != nil {
		t.Errorf("re-laid-out file: %v", err)
	}
	// An invalid reference is not written.
	bad := fileRef()
	bad.Strata[0].Taus[2] = 0.9
	if err := Save(&bytes.Buffer{}, bad); !errors.Is(err, ErrInvalid) {
		t.Errorf("Save of invalid reference: %v", err)
	}
}

func TestFileDamage(t *testing.T) {
	data := saved(t, fileRef())
	load := func(b []byte) error {
		_, err := Load(bytes.NewReader(b), "ref.json")
		return err
	}
	// Truncated anywhere: malformed, with the file name and position.
	for _, n := range []int{0, 1, 10, len(data) / 3, len(data) / 2, len(data) - 3, len(data) - 2} {
		err := load(data[:n])
		if !errors.Is(err, ErrMalformed) {
			t.Errorf("truncated to %d bytes: %v, want ErrMalformed", n, err)
			continue
		}
		if n > 1 && (!strings.Contains(err.Error(), "ref.json:") || !strings.Contains(err.Error(), "truncated") || !strings.Contains(err.Error(), "byte ")) {
			t.Errorf("truncated to %d: message %q lacks file, 'truncated' or byte offset", n, err)
		}
	}
	// A changed digit in a coefficient: damaged.
	i := bytes.Index(data, []byte(`"coef": [`))
	j := i + bytes.IndexAny(data[i+12:], "123456789") + 12
	flipped := bytes.Clone(data)
	flipped[j] = '0' + (flipped[j]-'0'+1)%10
	if err := load(flipped); !errors.Is(err, ErrDamaged) {
		t.Errorf("flipped digit: %v, want ErrDamaged", err)
	}
	// A flipped byte anywhere never changes a value silently (or panics):
	// bytes spread over the whole file.
	step := max(len(data)/500, 1)
	if testing.Short() {
		step = max(len(data)/100, 1)
	}
	for k := 0; k < len(data); k += step {
		b := bytes.Clone(data)
		b[k] ^= 0x04
		r, err := Load(bytes.NewReader(b), "ref.json")
		// A change can load only when it left every value as it was: the
		// checksum covers values, and the last of 17 significant digits can
		// change without changing the float64 (exact identity of IEEE
		// round-to-nearest).
		if err == nil && !bytes.Equal(saved(t, r), data) {
			t.Errorf("byte %d (%q -> %q) flipped and the changed file loads", k, data[k], b[k])
		}
	}
	// Newer version: named, with both versions.
	newer := bytes.Replace(data, []byte(fmt.Sprintf(`"version": %d`, FormatVersion)), []byte(fmt.Sprintf(`"version": %d`, FormatVersion+1)), 1)
	err := load(newer)
	if !errors.Is(err, ErrVersion) || !strings.Contains(err.Error(), fmt.Sprintf("version %d", FormatVersion+1)) || !strings.Contains(err.Error(), fmt.Sprintf("version %d", FormatVersion)) {
		t.Errorf("newer version: %v", err)
	}
	// Unknown field: refused, named.
	extra := bytes.Replace(data, []byte(`"measure":`), []byte(`"colour": "red", "measure":`), 1)
	if err := load(extra); !errors.Is(err, ErrMalformed) || !strings.Contains(err.Error(), "colour") {
		t.Errorf("unknown field: %v", err)
	}
	// Wrong type, with a position.
	typed := bytes.Replace(data, []byte(`"degree": 3`), []byte(`"degree": "3"`), 1)
	if err := load(typed); !errors.Is(err, ErrMalformed) || !strings.Contains(err.Error(), "degree") || !strings.Contains(err.Error(), "ref.json:") {
		t.Errorf("mistyped field: %v", err)
	}
	// Another program's JSON, or not JSON at all.
	other := bytes.Replace(data, []byte(`"growband-reference"`), []byte(`"chart-maker"`), 1)
	for _, b := range [][]byte{other, []byte(`{"a": 1}`), []byte("age,weight\n1,2\n")} {
		if err := load(b); !errors.Is(err, ErrNotReference) {
			t.Errorf("%.20q: %v, want ErrNotReference", b, err)
		}
	}
	// No checksum, or trailing data.
	k := bytes.LastIndex(data, []byte(`,`))
	nosum := append(bytes.Clone(data[:k]), []byte("\n}\n")...)
	if err := load(nosum); !errors.Is(err, ErrMalformed) || !strings.Contains(err.Error(), "checksum") {
		t.Errorf("no checksum: %v", err)
	}
	if err := load(append(bytes.Clone(data), "{}"...)); !errors.Is(err, ErrMalformed) {
		t.Errorf("trailing data: %v", err)
	}
}

// TestFileInvalidContent writes files whose checksum is right but whose
// content is not a usable reference: Load must still refuse them.
func TestFileInvalidContent(t *testing.T) {
	for name, mutate := range map[string]func(r *Reference){
		"knots decrease":   func(r *Reference) { k := r.Strata[0].Knots; k[4], k[5] = k[5], k[4] },
		"coef length":      func(r *Reference) { r.Strata[1].Coef[3] = r.Strata[1].Coef[3][:2] },
		"coef not ordered": func(r *Reference) { r.Strata[1].Coef[3][0] += 1 },
		"taus":             func(r *Reference) { r.Strata[0].Taus[0] = 0 },
		"ages":             func(r *Reference) { r.Strata[0].AgeMin = r.Strata[0].AgeMax },
		"degree":           func(r *Reference) { r.Degree = 4 },
		"no strata":        func(r *Reference) { r.Strata = []Stratum{} },
	} {
		r := fileRef()
		r.Format, r.Version = FormatName, FormatVersion
		mutate(r)
		sum, err := checksum(r)
		if err != nil {
			t.Fatal(err)
		}
		body, err := json.MarshalIndent(fileBody{r, sum}, "", "  ")
		if err != nil {
			t.Fatal(err)
		}
		if _, err := Load(bytes.NewReader(body), "x.json"); !errors.Is(err, ErrInvalid) || !strings.HasPrefix(err.Error(), "x.json: ") {
			t.Errorf("%s: %v, want ErrInvalid naming x.json", name, err)
		}
	}
}

func TestLoadFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ref.json")
	if err := os.WriteFile(path, saved(t, fileRef()), 0o644); err != nil {
		t.Fatal(err)
	}
	r, err := LoadFile(path)
	if err != nil || len(r.Strata) != 2 {
		t.Fatalf("LoadFile: %v", err)
	}
	if _, err := LoadFile(filepath.Join(t.TempDir(), "missing.json")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}

func TestPosition(t *testing.T) {
	data := []byte("ab\ncd\n\nef")
	for _, c := range []struct{ off, line, col int }{{0, 1, 1}, {2, 1, 3}, {3, 2, 1}, {7, 4, 1}, {9, 4, 3}, {99, 4, 3}} {
		if l, col := position(data, c.off); l != c.line || col != c.col {
			t.Errorf("offset %d: %d:%d, want %d:%d", c.off, l, col, c.line, c.col)
		}
	}
}

// smallRef is a reference with a file of about 2 KB, which the fuzzer can
// mutate effectively.
func smallRef() *Reference {
	st := linearStratum("F", AgeScale{Kind: "log", Shift: 1}, 2, 0, 5, []float64{1}, []float64{0.1, 0.5, 0.9}, 1, 2,
		func(tau float64) float64 { return 4 * tau })
	st.Chart = []float64{0.1, 0.9}
	st.Flags = []Flag{{Tau: 0.1, AgeLo: 0, AgeHi: 1, Expected: 2, Action: "flagged"}}
	return &Reference{Measure: "height", AgeScale: AgeScale{Kind: "log", Shift: 1}, Degree: 2, Strata: []Stratum{st}}
}

func FuzzLoad(f *testing.F) {
	var buf bytes.Buffer
	if err := Save(&buf, smallRef()); err != nil {
		f.Fatal(err)
	}
	data := buf.Bytes()
	f.Add(data)
	f.Add(data[:len(data)/2])
	f.Add(data[:len(data)-2])
	for _, k := range []int{5, 40, len(data) / 3, len(data) - 20} {
		b := bytes.Clone(data)
		b[k] ^= 0x01
		f.Add(b)
	}
	f.Add(bytes.Replace(data, []byte(fmt.Sprintf(`"version": %d`, FormatVersion)), []byte(fmt.Sprintf(`"version": %d`, FormatVersion+1)), 1))
	f.Add([]byte(`{"format":"growband-reference","version":1,"strata":[{"knots":[0,0,1,1],"taus":[0.5],"coef":[[1,2]]}],"checksum":"x"}`))
	f.Add([]byte(`{}`))
	f.Fuzz(func(t *testing.T, b []byte) {
		r, err := Load(bytes.NewReader(b), "fuzz")
		if err != nil {
			return
		}
		// A file that loads is usable: scoring and tables do not panic.
		for _, st := range r.Strata {
			mid := (st.AgeMin + st.AgeMax) / 2
			_, _ = r.Score(st.Name, mid, 1)
			_, _ = r.Curve(nil, st.Name, mid)
			_, _ = r.Velocity(st.Name, mid, st.Taus[0])
			_, _ = r.LMS(st.Name, st.AgeMax)
		}
	})
}

// A file of version 1 has no tail model: Load fits it from the curves, and
// the scores are those of the reference with the same model fitted.
func TestFileVersion1(t *testing.T) {
	r := fileRef()
	old := *r
	old.Strata = append([]Stratum(nil), r.Strata...)
	for i := range old.Strata {
		old.Strata[i].Tail = nil
	}
	old.Format, old.Version = FormatName, 1
	sum, err := checksum(&old)
	if err != nil {
		t.Fatal(err)
	}
	data, err := json.Marshal(fileBody{&old, sum})
	if err != nil {
		t.Fatal(err)
	}
	got, err := Load(bytes.NewReader(data), "v1.json")
	if err != nil {
		t.Fatal(err)
	}
	for i := range got.Strata {
		if got.Strata[i].Tail == nil {
			t.Fatalf("stratum %q: no tail model after loading", got.Strata[i].Name)
		}
	}
	for _, v := range []float64{1, 3, 9, 30} {
		a, err1 := r.Score("F", 6, v)
		b, err2 := got.Score("F", 6, v)
		if err1 != nil || err2 != nil || a != b {
			t.Errorf("value %g: %+v %v vs loaded %+v %v", v, a, err1, b, err2)
		}
	}
}
