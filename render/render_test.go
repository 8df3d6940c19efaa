package render

import (
	"bytes"
	"errors"
	"fmt"
	"html"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// charts builds one of each chart from the invented sample inputs of
// look_test.go.
func charts(t *testing.T) map[string]*Figure {
	t.Helper()
	out := make(map[string]*Figure)
	var err error
	if out["centile"], err = CentileChart(sampleCentiles(true)); err != nil {
		t.Fatal(err)
	}
	if out["worm"], err = WormChart(sampleWorm()); err != nil {
		t.Fatal(err)
	}
	if out["zdist"], err = ZDistChart(sampleZDist()); err != nil {
		t.Fatal(err)
	}
	if out["diff"], err = DiffChart(sampleDiff()); err != nil {
		t.Fatal(err)
	}
	return out
}

var textElem = regexp.MustCompile(`(?s)<text[^>]*>(.*?)</text>`)

// svgTexts returns the contents of the SVG's text elements, unescaped.
func svgTexts(svg []byte) []string {
	var out []string
	for _, m := range textElem.FindAllSubmatch(svg, -1) {
		out = append(out, html.UnescapeString(string(m[1])))
	}
	return out
}

func hasText(texts []string, want string) bool {
	for _, s := range texts {
		if s == want {
			return true
		}
	}
	return false
}

// joinedWords joins all texts' words with single spaces, so a wrapped
// paragraph can be searched for.
func joinedWords(texts []string) string {
	return strings.Join(strings.Fields(strings.Join(texts, " ")), " ")
}

func render(t *testing.T, d Drawer, format string) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := Write(&buf, d, format, 0, 0); err != nil {
		t.Fatalf("%s: %v", format, err)
	}
	return buf.Bytes()
}

func TestChartsWriteEveryFormat(t *testing.T) {
	dir := t.TempDir()
	for name, f := range charts(t) {
		for _, ext := range Formats() {
			path := filepath.Join(dir, name+"."+ext)
			if err := Save(path, f, "", 0, 0); err != nil {
				t.Fatalf("%s: %v", path, err)
			}
			b, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			// File signatures: the PNG and PDF specifications, and the XML
			// declaration vgsvg writes first.
			var sig string
			switch ext {
			case "svg":
				sig = "<?xml"
			case "png":
				sig = "\x89PNG\r\n\x1a\n"
			case "pdf":
				sig = "%PDF-"
			}
			if !bytes.HasPrefix(b, []byte(sig)) {
				t.Errorf("%s: starts %q, want %q", path, b[:min(len(b), 8)], sig)
			}
		}
	}
}

func TestCentileSVGText(t *testing.T) {
	c := sampleCentiles(true)
	f, err := CentileChart(c)
	if err != nil {
		t.Fatal(err)
	}
	texts := svgTexts(render(t, f, "svg"))
	for _, want := range []string{"Weight by age — girls", "Age (months)", "Weight (kg)"} {
		if !hasText(texts, want) {
			t.Errorf("SVG lacks text %q", want)
		}
	}
	for _, cv := range c.Curves {
		if want := centileText(cv.Centile); !hasText(texts, want) {
			t.Errorf("SVG lacks centile label %q", want)
		}
	}
	for _, ch := range c.Children {
		if !hasText(texts, ch.Label) {
			t.Errorf("SVG lacks child label %q", ch.Label)
		}
		for _, z := range ch.Z {
			if want := fmt.Sprintf("%+.1f", z); !hasText(texts, want) {
				t.Errorf("SVG lacks z label %q", want)
			}
		}
	}
	if !strings.Contains(joinedWords(texts), c.Caution) {
		t.Errorf("SVG lacks the caution %q", c.Caution)
	}
}

func TestOtherChartsSVGText(t *testing.T) {
	fs := charts(t)
	cases := []struct {
		chart string
		want  []string
	}{
		{"worm", []string{"Worm plot of weight z-scores — girls", "Expected normal score", "Observed minus expected z"}},
		{"zdist", []string{"Weight z-scores in clinic sample — girls", "z-score", "Density", "n = 500", "standard normal density"}},
		{"diff", []string{"Weight centiles of reference B in z-scores of reference A — girls", "Age (months)", "Difference (z units)", "3", "50", "97"}},
	}
	for _, tc := range cases {
		texts := svgTexts(render(t, fs[tc.chart], "svg"))
		for _, w := range tc.want {
			if !hasText(texts, w) {
				t.Errorf("%s: SVG lacks text %q", tc.chart, w)
			}
		}
		if !strings.Contains(joinedWords(texts), sampleCentiles(false).Caution) {
			t.Errorf("%s: SVG lacks the caution", tc.chart)
		}
	}
	texts := svgTexts(render(t, fs["worm"], "svg"))
	for _, g := range sampleWorm().Groups {
		found := false
		for _, s := range texts {
			found = found || strings.HasPrefix(s, g.Label+": n = "+fmt.Sprint(len(g.Expected)))
		}
		if !found {
			t.Errorf("worm: no panel title for %q", g.Label)
		}
	}
}

func TestZDistAnnotation(t *testing.T) {
	// Mean 0.5 and sample SD √(5/3) = 1.29099 of {−1, 0, 1, 2}: exact
	// arithmetic.
	f, err := ZDistChart(&ZDist{Z: []float64{-1, 0, 1, 2}})
	if err != nil {
		t.Fatal(err)
	}
	texts := svgTexts(render(t, f, "svg"))
	for _, w := range []string{"n = 4", "mean = 0.50", "SD = 1.29"} {
		if !hasText(texts, w) {
			t.Errorf("SVG lacks %q; texts %q", w, texts)
		}
	}
}

func TestPNGNotBlank(t *testing.T) {
	for name, f := range charts(t) {
		img, err := png.Decode(bytes.NewReader(render(t, f, "png")))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		b := img.Bounds()
		// 20 cm at pngDPI: 20/2.54*150 = 1181 pixels (exact arithmetic).
		if b.Dx() != 1181 {
			t.Errorf("%s: width %d pixels, want 1181", name, b.Dx())
		}
		colours := make(map[color.RGBA]bool)
		nonWhite := 0
		for y := b.Min.Y; y < b.Max.Y; y += 2 {
			for x := b.Min.X; x < b.Max.X; x += 2 {
				c := color.RGBAModel.Convert(img.At(x, y)).(color.RGBA)
				colours[c] = true
				if c != (color.RGBA{255, 255, 255, 255}) {
					nonWhite++
				}
			}
		}
		frac := float64(nonWhite) / float64(b.Dx()*b.Dy()/4)
		// Thresholds are common practice for "something was drawn": a
		// blank or text-only image has a handful of colours and little ink.
		if len(colours) < 50 || frac < 0.05 {
			t.Errorf("%s: %d colours, %.3f non-white: looks blank", name, len(colours), frac)
		}
	}
}

func TestPNGShowsBandColours(t *testing.T) {
	f, err := CentileChart(sampleCentiles(false))
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(render(t, f, "png")))
	if err != nil {
		t.Fatal(err)
	}
	want := Palette(DefaultHue, 3)
	seen := make([]int, len(want))
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			c := color.NRGBAModel.Convert(img.At(x, y)).(color.NRGBA)
			for k, w := range want {
				if c == w {
					seen[k]++
				}
			}
		}
	}
	for k, n := range seen {
		if n < 1000 {
			t.Errorf("band %d colour %v on %d pixels only", k, want[k], n)
		}
	}
}

// hueLight computes hue (degrees) and lightness of an sRGB colour with the
// textbook hexcone formulas, independently of hsl.
func hueLight(c color.NRGBA) (h, l float64) {
	r, g, b := float64(c.R)/255, float64(c.G)/255, float64(c.B)/255
	mx, mn := math.Max(r, math.Max(g, b)), math.Min(r, math.Min(g, b))
	l = (mx + mn) / 2
	d := mx - mn
	switch {
	case d == 0:
		return 0, l
	case mx == r:
		h = 60 * math.Mod((g-b)/d, 6)
	case mx == g:
		h = 60 * ((b-r)/d + 2)
	default:
		h = 60 * ((r-g)/d + 4)
	}
	return math.Mod(h+360, 360), l
}

func hueDist(a, b float64) float64 {
	d := math.Abs(a - b)
	return math.Min(d, 360-d)
}

func TestPaletteOneHue(t *testing.T) {
	for _, hue := range []float64{0, 35, 188, 250, 359} {
		for _, n := range []int{1, 2, 3, 6, 9} {
			p := Palette(hue, n)
			if len(p) != n {
				t.Fatalf("Palette(%g, %d) has %d colours", hue, n, len(p))
			}
			prevL := 2.0
			for k, c := range p {
				h, l := hueLight(c)
				// 8-bit channels move the hue of these light colours by
				// under 3 degrees (rounding bound worked out from the
				// hexcone formula at lightness 0.93, saturation 0.36).
				if hueDist(h, hue) > 3 {
					t.Errorf("Palette(%g, %d)[%d] = %v has hue %.1f", hue, n, k, c, h)
				}
				if !(l < prevL) {
					t.Errorf("Palette(%g, %d)[%d] lightness %.3f not below the band outside it (%.3f)", hue, n, k, l, prevL)
				}
				prevL = l
				if c.A != 0xff {
					t.Errorf("band colour %v not opaque", c)
				}
			}
		}
	}
	if Palette(10, 0) != nil {
		t.Error("Palette(n=0) not nil")
	}
}

func TestWithHueChangesBands(t *testing.T) {
	f, err := CentileChart(sampleCentiles(false), WithHue(35))
	if err != nil {
		t.Fatal(err)
	}
	svg := string(render(t, f, "svg"))
	for _, c := range Palette(35, 3) {
		hex := fmt.Sprintf("#%02X%02X%02X", c.R, c.G, c.B) // vgsvg's colour notation
		if !strings.Contains(svg, hex) {
			t.Errorf("SVG drawn with hue 35 lacks band colour %s", hex)
		}
	}
	for _, c := range Palette(DefaultHue, 3) {
		hex := fmt.Sprintf("#%02X%02X%02X", c.R, c.G, c.B)
		if strings.Contains(svg, "fill:"+hex) {
			t.Errorf("SVG drawn with hue 35 still fills with default colour %s", hex)
		}
	}
}

func TestUnknownFormat(t *testing.T) {
	f, err := CentileChart(sampleCentiles(false))
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	for _, format := range []string{"gif", "", "svgz", "jpeg"} {
		if err := Write(&buf, f, format, 0, 0); !errors.Is(err, ErrFormat) {
			t.Errorf("Write format %q: err %v, want ErrFormat", format, err)
		}
	}
	for _, format := range []string{"SVG", ".png", " pdf "} {
		if err := Write(&buf, f, format, 0, 0); err != nil {
			t.Errorf("Write format %q: %v", format, err)
		}
	}
	dir := t.TempDir()
	bad := filepath.Join(dir, "chart.gif")
	if err := Save(bad, f, "", 0, 0); !errors.Is(err, ErrFormat) {
		t.Errorf("Save %s: err %v, want ErrFormat", bad, err)
	}
	if _, err := os.Stat(bad); !os.IsNotExist(err) {
		t.Errorf("Save left %s behind", bad)
	}
	if err := Save(filepath.Join(dir, "chart.out"), f, "png", 0, 0); err != nil {
		t.Errorf("explicit format: %v", err)
	}
	if _, err := FormatOf("a/b.PDF"); err != nil {
		t.Errorf("FormatOf: %v", err)
	}
	if _, err := FormatOf("a/b.txt"); !errors.Is(err, ErrFormat) {
		t.Errorf("FormatOf txt: %v", err)
	}
	for _, wh := range [][2]float64{{-1, 10}, {10, math.NaN()}, {math.Inf(1), 10}} {
		if err := Write(&buf, f, "svg", vgl(wh[0]), vgl(wh[1])); !errors.Is(err, ErrSize) {
			t.Errorf("size %v: err %v, want ErrSize", wh, err)
		}
	}
}

func TestBadInput(t *testing.T) {
	good := func() *Centiles { c := sampleCentiles(true); return c }
	nan := math.NaN()
	cases := []struct {
		name string
		mod  func(c *Centiles)
		want error
	}{
		{"no curves", func(c *Centiles) { c.Curves = nil }, ErrEmpty},
		{"empty curve", func(c *Centiles) { c.Curves[0].Ages, c.Curves[0].Values = nil, nil }, ErrEmpty},
		{"short values", func(c *Centiles) { c.Curves[2].Values = c.Curves[2].Values[1:] }, ErrLength},
		{"NaN value", func(c *Centiles) { c.Curves[1].Values[4] = nan }, ErrNaN},
		{"infinite age", func(c *Centiles) { c.Curves[1].Ages[4] = math.Inf(1) }, ErrNaN},
		{"centile 0", func(c *Centiles) { c.Curves[0].Centile = 0 }, ErrCentile},
		{"centile 100", func(c *Centiles) { c.Curves[6].Centile = 100 }, ErrCentile},
		{"centile NaN", func(c *Centiles) { c.Curves[0].Centile = nan }, ErrCentile},
		{"duplicate", func(c *Centiles) { c.Curves[1].Centile = c.Curves[0].Centile }, ErrDuplicate},
		{"ages fall", func(c *Centiles) { c.Curves[3].Ages[5] = c.Curves[3].Ages[4] }, ErrOrder},
		{"band short", func(c *Centiles) { c.Curves[0].Band.Hi = c.Curves[0].Band.Hi[2:] }, ErrLength},
		{"band NaN", func(c *Centiles) { c.Curves[0].Band.Lo[3] = nan }, ErrNaN},
		{"band own ages short", func(c *Centiles) { c.Curves[0].Band.Ages = []float64{0, 1} }, ErrLength},
		{"data short", func(c *Centiles) { c.Data.Values = c.Data.Values[:10] }, ErrLength},
		{"data NaN", func(c *Centiles) { c.Data.Ages[0] = nan }, ErrNaN},
		{"child empty", func(c *Centiles) { c.Children[0].Ages, c.Children[0].Values, c.Children[0].Z = nil, nil, nil }, ErrEmpty},
		{"child short", func(c *Centiles) { c.Children[1].Values = c.Children[1].Values[1:] }, ErrLength},
		{"child z short", func(c *Centiles) { c.Children[1].Z = c.Children[1].Z[1:] }, ErrLength},
		{"child NaN", func(c *Centiles) { c.Children[0].Values[0] = nan }, ErrNaN},
	}
	for _, tc := range cases {
		c := good()
		tc.mod(c)
		_, err := CentileChart(c)
		if !errors.Is(err, tc.want) {
			t.Errorf("%s: err %v, want %v", tc.name, err, tc.want)
		}
	}
	if _, err := CentileChart(nil); !errors.Is(err, ErrEmpty) {
		t.Errorf("nil: %v", err)
	}

	if _, err := WormChart(&Worm{}); !errors.Is(err, ErrEmpty) {
		t.Errorf("worm empty: %v", err)
	}
	if _, err := WormChart(&Worm{Groups: []WormGroup{detrend([]float64{1, 2})}}); !errors.Is(err, ErrTooFew) {
		t.Errorf("worm too few: %v", err)
	}
	if _, err := WormChart(&Worm{Groups: []WormGroup{{Expected: []float64{-1, 0, 1}, Deviation: []float64{1, nan, 2}}}}); !errors.Is(err, ErrNaN) {
		t.Errorf("worm NaN: %v", err)
	}
	if _, err := ZDistChart(nil); !errors.Is(err, ErrEmpty) {
		t.Errorf("zdist nil: %v", err)
	}
	if _, err := ZDistChart(&ZDist{Z: []float64{1}}); !errors.Is(err, ErrTooFew) {
		t.Errorf("zdist one value: %v", err)
	}
	if _, err := ZDistChart(&ZDist{Z: []float64{1, math.Inf(-1)}}); !errors.Is(err, ErrNaN) {
		t.Errorf("zdist inf: %v", err)
	}
	diffCases := []struct {
		name string
		d    *Diff
		want error
	}{
		{"empty", &Diff{}, ErrEmpty},
		{"short", &Diff{Curves: []DiffCurve{{Centile: 50, Ages: []float64{0, 1}, Z: []float64{0}}}}, ErrLength},
		{"NaN", &Diff{Curves: []DiffCurve{{Centile: 50, Ages: []float64{0, 1}, Z: []float64{0, nan}}}}, ErrNaN},
		{"centile", &Diff{Curves: []DiffCurve{{Centile: 120, Ages: []float64{0, 1}, Z: []float64{0, 0}}}}, ErrCentile},
		{"order", &Diff{Curves: []DiffCurve{{Centile: 50, Ages: []float64{1, 0}, Z: []float64{0, 0}}}}, ErrOrder},
		{"twice", &Diff{Curves: []DiffCurve{
			{Centile: 50, Ages: []float64{0, 1}, Z: []float64{0, 0}},
			{Centile: 50, Ages: []float64{0, 1}, Z: []float64{0, 0}}}}, ErrDuplicate},
	}
	for _, tc := range diffCases {
		if _, err := DiffChart(tc.d); !errors.Is(err, tc.want) {
			t.Errorf("diff %s: err %v, want %v", tc.name, err, tc.want)
		}
	}
}

func TestErrorNamesPlace(t *testing.T) {
	c := sampleCentiles(false)
	c.Curves[3].Values = c.Curves[3].Values[1:]
	_, err := CentileChart(c)
	if err == nil || !strings.Contains(err.Error(), "centile 50") {
		t.Errorf("error %v does not name centile 50", err)
	}
}

func TestBandPairs(t *testing.T) {
	mk := func(cs ...float64) []Curve {
		out := make([]Curve, len(cs))
		for i, c := range cs {
			out[i].Centile = c
		}
		return out
	}
	cases := []struct {
		cs   []float64
		want [][2]int
	}{
		{[]float64{3, 10, 25, 50, 75, 90, 97}, [][2]int{{0, 6}, {1, 5}, {2, 4}}},
		{[]float64{2.5, 50, 97.5}, [][2]int{{0, 2}}},
		{[]float64{5, 50, 85, 95}, [][2]int{{0, 3}}},
		{[]float64{10, 50}, nil},
		{[]float64{50}, nil},
	}
	for _, tc := range cases {
		got := bandPairs(mk(tc.cs...))
		if fmt.Sprint(got) != fmt.Sprint(tc.want) {
			t.Errorf("bandPairs(%v) = %v, want %v", tc.cs, got, tc.want)
		}
	}
}

func TestSpreadApart(t *testing.T) {
	const eps = 1e-9
	cases := []struct {
		want, exp []float64
		gap       float64
		lo, hi    float64
	}{
		// Already apart: unchanged.
		{[]float64{0, 5, 2}, []float64{0, 5, 2}, 1, -10, 10},
		// Three on one spot: spread symmetrically about it (least squares:
		// the mean of the wishes is kept, exact arithmetic).
		{[]float64{0, 0, 0}, []float64{-1, 0, 1}, 1, -10, 10},
		// Two close, one far: only the close pair moves, about its mean.
		{[]float64{0, 0.5, 9}, []float64{-0.25, 0.75, 9}, 1, -10, 10},
		// A chain merges into one cluster centred on the mean of
		// want_j − j·gap: (0 + 0.2−1 + 0.4−2)/3 = −0.8, so −0.8, 0.2, 1.2.
		{[]float64{0, 0.2, 0.4}, []float64{-0.8, 0.2, 1.2}, 1, -10, 10},
		// Pushed inside the bounds from below.
		{[]float64{0, 0, 0}, []float64{0, 1, 2}, 1, 0, 10},
		// And from above.
		{[]float64{10, 10}, []float64{9, 10}, 1, 0, 10},
	}
	for _, tc := range cases {
		got := spreadApart(tc.want, tc.gap, tc.lo, tc.hi)
		for i := range got {
			if math.Abs(got[i]-tc.exp[i]) > eps {
				t.Errorf("spreadApart(%v) = %v, want %v", tc.want, got, tc.exp)
				break
			}
		}
	}
}

func TestSpreadApartProperties(t *testing.T) {
	// Seeded pseudo-random wishes: the result keeps order, keeps the gap
	// and stays in bounds whenever they are wide enough.
	seed := uint64(1)
	next := func() float64 {
		seed = seed*6364136223846793005 + 1442695040888963407 // Knuth's MMIX LCG constants
		return float64(seed>>11) / (1 << 53)
	}
	for trial := range 500 {
		n := 1 + trial%12
		want := make([]float64, n)
		for i := range want {
			want[i] = 20 * next()
		}
		const gap, lo, hi = 1.5, 0.0, 20.0
		got := spreadApart(want, gap, lo, hi)
		for i := range n {
			for j := range n {
				if want[i] < want[j] && !(got[i] < got[j]) {
					t.Fatalf("order lost: want %v got %v", want, got)
				}
				if i != j && math.Abs(got[i]-got[j]) < gap-1e-9 {
					t.Fatalf("gap lost: want %v got %v", want, got)
				}
			}
			if got[i] < lo-1e-9 || got[i] > hi+1e-9 {
				t.Fatalf("out of bounds: want %v got %v", want, got)
			}
		}
	}
}

func TestWrapText(t *testing.T) {
	sty := textStyle(8, inkColor)
	s := sampleCentiles(false).Caution
	for _, w := range []float64{60, 150, 300, 2000} {
		lines := wrapText(sty, s, vgl(w))
		for _, l := range lines {
			if sty.Width(l) > vgl(w) && strings.Contains(l, " ") {
				t.Errorf("width %g: line %q too wide", w, l)
			}
		}
		if got := strings.Join(lines, " "); got != strings.Join(strings.Fields(s), " ") {
			t.Errorf("width %g: words changed: %q", w, got)
		}
	}
}

func TestTicks(t *testing.T) {
	cases := []struct {
		lo, hi float64
		target int
		want   []string
	}{
		{0, 60, 9, []string{"0", "5", "10", "15", "20", "25", "30", "35", "40", "45", "50", "55", "60"}},
		{0, 64, 9, []string{"0", "10", "20", "30", "40", "50", "60"}},
		{-0.45, 0.45, 8, []string{"-0.4", "-0.3", "-0.2", "-0.1", "0.0", "0.1", "0.2", "0.3", "0.4"}},
		{2.3, 21, 8, []string{"4", "6", "8", "10", "12", "14", "16", "18", "20"}},
	}
	for _, tc := range cases {
		var got []string
		for _, tk := range (niceTicks{target: tc.target}).Ticks(tc.lo, tc.hi) {
			if tk.Label != "" {
				got = append(got, tk.Label)
			}
		}
		if fmt.Sprint(got) != fmt.Sprint(tc.want) {
			t.Errorf("ticks [%g, %g]: %v, want %v", tc.lo, tc.hi, got, tc.want)
		}
	}
}

func TestToCP1252(t *testing.T) {
	// Byte values from the Windows-1252 code page (vgpdf's cp1252.map).
	cases := map[string]string{
		"plain":        "plain",
		"0–3 months":   "0\x963 months",
		"a — b":        "a \x97 b",
		"5 µg, 3·2 °C": "5 \xb5g, 3\xb72 \xb0C",
		"α":            "?",
	}
	for in, want := range cases {
		if got := toCP1252(in); got != want {
			t.Errorf("toCP1252(%q) = %q, want %q", in, got, want)
		}
	}
}

func TestSizeDefault(t *testing.T) {
	f, err := DiffChart(sampleDiff())
	if err != nil {
		t.Fatal(err)
	}
	svg := render(t, f, "svg")
	// 20 cm = 566.93 pt and 14 cm = 396.85 pt (72 pt per inch, 2.54 cm per
	// inch); vgsvg writes sizes in points.
	if !bytes.Contains(svg, []byte(`width="566.93pt" height="396.85pt"`)) {
		t.Errorf("SVG header %q", svg[:200])
	}
	var buf bytes.Buffer
	if err := Write(&buf, f, "png", vgl(72), vgl(36)); err != nil {
		t.Fatal(err)
	}
	cfg, err := png.DecodeConfig(&buf)
	if err != nil {
		t.Fatal(err)
	}
	// 1 inch by half an inch at pngDPI.
	if cfg.Width != pngDPI || cfg.Height != pngDPI/2 {
		t.Errorf("PNG %dx%d, want %dx%d", cfg.Width, cfg.Height, pngDPI, pngDPI/2)
	}
}

func TestFigureZeroValue(t *testing.T) {
	var f Figure
	b := render(t, &f, "png")
	if _, _, err := image.Decode(bytes.NewReader(b)); err != nil {
		t.Fatal(err)
	}
}
