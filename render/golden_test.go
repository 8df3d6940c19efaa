package render

import (
	"bytes"
	"flag"
	"image"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
	"gonum.org/v1/plot/vg"
)

// updateGolden rewrites the golden images: go test ./render -run Golden -update.
var updateGolden = flag.Bool("update", false, "rewrite the golden images in testdata/golden")

// Golden-image tolerances (our choice): a pixel differs when a channel moves
// by more than goldenChannel of 255 (anti-aliasing and font hinting shift
// edges by a level or two between platforms), and the chart fails when more
// than goldenShare of its pixels differ (a moved label, a changed colour or
// a missing curve changes several percent).
const (
	goldenChannel = 24
	goldenShare   = 0.005
)

// goldenSize is the size the golden charts are drawn at: small, to keep
// the files small, big enough to show every element.
const goldenW, goldenH = 12 * vg.Centimeter, 9 * vg.Centimeter

func goldenCharts(t *testing.T) map[string]*Figure {
	t.Helper()
	c := sampleCentiles(true)
	c.Children = c.Children[:1]
	for _, z := range []float64{-2, 2} {
		cv := Curve{Centile: 100 * distuv.UnitNormal.CDF(z), Label: map[float64]string{-2: "−2 SD", 2: "+2 SD"}[z], Dashed: true}
		for a := 0.0; a <= 60; a += 0.5 {
			cv.Ages = append(cv.Ages, a)
			cv.Values = append(cv.Values, lmsValue(a, z))
		}
		c.Curves = append(c.Curves, cv)
	}
	ov := &Overlay{Label: "second reference"}
	for _, cc := range []float64{3, 50, 97} {
		cv := Curve{Centile: cc}
		for a := 0.0; a <= 60; a += 1 {
			cv.Ages = append(cv.Ages, a)
			cv.Values = append(cv.Values, 1.04*lmsValue(a, distuv.UnitNormal.Quantile(cc/100)))
		}
		ov.Curves = append(ov.Curves, cv)
	}
	c.Overlay = ov
	zd := sampleZDist()
	zd.Weights = make([]float64, len(zd.Z))
	r := rand.New(rand.NewPCG(9, 10))
	for i := range zd.Weights {
		zd.Weights[i] = 0.5 + r.Float64()
	}
	var vs []float64
	for range 400 {
		vs = append(vs, r.NormFloat64())
	}
	zd.Vs = &ZSample{Cohort: "other clinic", Z: vs}
	qq := &QQ{Measure: "weight", Stratum: "girls", Caution: zd.Caution}
	for k, z := range [][]float64{zd.Z, vs} {
		g := detrend(z)
		e := make([]float64, len(z))
		for i := range e {
			e[i] = g.Expected[i] + g.Deviation[i]
		}
		qq.Series = append(qq.Series, QQSeries{Label: []string{"clinic sample", "other clinic"}[k], Expected: g.Expected, Observed: e})
	}
	bm := &BandMeans{Measure: "weight", AgeUnit: "months", Stratum: "girls", Level: 0.95, Caution: zd.Caution}
	for k := range 2 {
		sr := BandSeries{Label: []string{"clinic sample", "other clinic"}[k]}
		for b := 0; b < 60; b += 12 {
			m := 0.1*float64(k) - 0.02*float64(b)/12
			sr.AgeLo, sr.AgeHi = append(sr.AgeLo, float64(b)), append(sr.AgeHi, float64(b+12))
			sr.Mean, sr.Lo, sr.Hi = append(sr.Mean, m), append(sr.Lo, m-0.15), append(sr.Hi, m+0.15)
		}
		bm.Series = append(bm.Series, sr)
	}
	out := map[string]*Figure{}
	var err error
	if out["centile"], err = CentileChart(c, WithFontSize(7)); err != nil {
		t.Fatal(err)
	}
	if out["worm"], err = WormChart(sampleWorm(), WithFontSize(7)); err != nil {
		t.Fatal(err)
	}
	if out["zdist"], err = ZDistChart(zd, WithFontSize(7)); err != nil {
		t.Fatal(err)
	}
	if out["qq"], err = QQChart(qq, WithFontSize(7)); err != nil {
		t.Fatal(err)
	}
	if out["means"], err = BandMeansChart(bm, WithFontSize(7)); err != nil {
		t.Fatal(err)
	}
	return out
}

// TestGoldenImages renders a few charts to PNG and compares them with the
// images in testdata/golden, within the tolerances above, to keep the look
// stable. After a deliberate change of look, rewrite them with -update and
// look at them before committing.
func TestGoldenImages(t *testing.T) {
	for name, fig := range goldenCharts(t) {
		var buf bytes.Buffer
		h := goldenH
		if name == "worm" {
			h = 0 // the worm plot asks for its own height
		}
		if err := Write(&buf, fig, "png", goldenW, h); err != nil {
			t.Fatal(err)
		}
		path := filepath.Join("testdata", "golden", name+".png")
		if *updateGolden {
			if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		f, err := os.Open(path)
		if err != nil {
			t.Fatalf("%s: %v (run with -update to create it)", name, err)
		}
		want, err := png.Decode(f)
		f.Close()
		if err != nil {
			t.Fatal(err)
		}
		got, err := png.Decode(&buf)
		if err != nil {
			t.Fatal(err)
		}
		if share := pixelsOff(got, want); share > goldenShare {
			t.Errorf("%s: %.2f%% of pixels differ from %s (tolerance %.2f%%)", name, 100*share, path, 100*goldenShare)
		}
	}
}

// pixelsOff returns the share of pixels whose colour differs by more than
// goldenChannel in some channel; 1 when the sizes differ.
func pixelsOff(a, b image.Image) float64 {
	if a.Bounds().Size() != b.Bounds().Size() {
		return 1
	}
	ra, rb := a.Bounds(), b.Bounds()
	off := 0
	for y := 0; y < ra.Dy(); y++ {
		for x := 0; x < ra.Dx(); x++ {
			r1, g1, b1, a1 := a.At(ra.Min.X+x, ra.Min.Y+y).RGBA()
			r2, g2, b2, a2 := b.At(rb.Min.X+x, rb.Min.Y+y).RGBA()
			for _, d := range []float64{float64(r1) - float64(r2), float64(g1) - float64(g2), float64(b1) - float64(b2), float64(a1) - float64(a2)} {
				if math.Abs(d)/257 > goldenChannel {
					off++
					break
				}
			}
		}
	}
	return float64(off) / float64(ra.Dx()*ra.Dy())
}

func TestGoldenDetectsChange(t *testing.T) {
	// The comparison can fail: the centile chart without its overlay differs
	// from the one with it by more than the tolerance.
	figs := goldenCharts(t)
	c := sampleCentiles(true)
	c.Children = c.Children[:1]
	plain, err := CentileChart(c, WithFontSize(7))
	if err != nil {
		t.Fatal(err)
	}
	var a, b bytes.Buffer
	if err := Write(&a, figs["centile"], "png", goldenW, goldenH); err != nil {
		t.Fatal(err)
	}
	if err := Write(&b, plain, "png", goldenW, goldenH); err != nil {
		t.Fatal(err)
	}
	ia, _ := png.Decode(&a)
	ib, _ := png.Decode(&b)
	if share := pixelsOff(ia, ib); share <= goldenShare {
		t.Errorf("charts with and without an overlay differ in only %.3f%% of pixels", 100*share)
	}
}
