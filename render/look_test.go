package render

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
	"gonum.org/v1/plot/vg"
)

// lookDir is where TestLook writes sample charts for a person to inspect;
// set RENDER_LOOK=1 to write them.
const lookDir = "/tmp/render-look"

// lmsValue is an invented smooth LMS-like growth curve, for the look test
// and the render tests only (it is not any published reference).
func lmsValue(age, z float64) float64 {
	m := 3.4 + 9.5*(1-math.Exp(-age/13)) + 0.07*age
	s := 0.125 - 0.0006*age
	l := -0.35
	return m * math.Pow(1+l*s*z, 1/l)
}

func sampleCentiles(withData bool) *Centiles {
	cents := []float64{3, 10, 25, 50, 75, 90, 97}
	c := &Centiles{
		Measure: "weight", Unit: "kg", AgeUnit: "months", Stratum: "girls",
		Caution: "This reference describes the sample it was built from. It is not a " +
			"diagnosis: clinical decisions follow local guidelines and a qualified clinician.",
	}
	for _, cc := range cents {
		z := distuv.UnitNormal.Quantile(cc / 100)
		var cv Curve
		cv.Centile = cc
		for a := 0.0; a <= 60; a += 0.5 {
			cv.Ages = append(cv.Ages, a)
			cv.Values = append(cv.Values, lmsValue(a, z))
		}
		if cc == 3 || cc == 50 || cc == 97 {
			b := &Band{}
			for i, a := range cv.Ages {
				w := 0.05 + 0.004*a
				if cc != 50 {
					w *= 2
				}
				b.Lo = append(b.Lo, cv.Values[i]-w)
				b.Hi = append(b.Hi, cv.Values[i]+w)
			}
			cv.Band = b
		}
		c.Curves = append(c.Curves, cv)
	}
	if withData {
		r := rand.New(rand.NewPCG(1, 2))
		d := &Points{}
		for range 900 {
			a := 60 * r.Float64()
			d.Ages = append(d.Ages, a)
			d.Values = append(d.Values, lmsValue(a, r.NormFloat64()))
		}
		c.Data = d
	}
	c.Children = []Child{
		{Label: "child A", Ages: []float64{1, 4, 9, 15, 24, 36, 48}, Values: []float64{4.3, 6.4, 8.3, 9.6, 11.1, 13.4, 15.2}},
		{Label: "child B", Ages: []float64{6, 12, 18, 30, 42}, Values: []float64{8.9, 10.8, 12.1, 14.6, 17.3}},
	}
	for i, ch := range c.Children {
		for j := range ch.Ages {
			// z of the invented curve, by bisection on lmsValue.
			lo, hi := -6.0, 6.0
			for range 60 {
				mid := (lo + hi) / 2
				if lmsValue(ch.Ages[j], mid) < ch.Values[j] {
					lo = mid
				} else {
					hi = mid
				}
			}
			c.Children[i].Z = append(c.Children[i].Z, (lo+hi)/2)
		}
	}
	return c
}

func sampleWorm() *Worm {
	r := rand.New(rand.NewPCG(3, 4))
	w := &Worm{Measure: "weight", Stratum: "girls", Caution: sampleCentiles(false).Caution}
	labels := []string{"0–3 months", "3–6 months", "6–12 months", "12–24 months", "24–36 months", "36–60 months"}
	for i, lab := range labels {
		n := 60 + 40*i
		var zs []float64
		for range n {
			z := r.NormFloat64()
			switch i {
			case 2:
				z = 1.2*z + 0.1 // too wide, shifted
			case 4:
				z += 0.15 * (z*z - 1) // skewed
			}
			zs = append(zs, z)
		}
		g := detrend(zs)
		g.Label = lab
		w.Groups = append(w.Groups, g)
	}
	return w
}

func sampleZDist() *ZDist {
	r := rand.New(rand.NewPCG(5, 6))
	z := &ZDist{Measure: "weight", Cohort: "clinic sample", Stratum: "girls", Caution: sampleCentiles(false).Caution}
	for range 500 {
		z.Z = append(z.Z, 0.2+1.1*r.NormFloat64())
	}
	return z
}

func sampleDiff() *Diff {
	d := &Diff{Measure: "weight", AgeUnit: "months", Stratum: "girls", A: "reference A", B: "reference B",
		Caution: sampleCentiles(false).Caution}
	for _, c := range []float64{3, 10, 25, 50, 75, 90, 97} {
		z := distuv.UnitNormal.Quantile(c / 100)
		cv := DiffCurve{Centile: c}
		for a := 0.0; a <= 60; a += 1 {
			cv.Ages = append(cv.Ages, a)
			cv.Z = append(cv.Z, 0.12*math.Sin(a/15)+0.05*z*(1+a/40)-0.02*z*z)
		}
		d.Curves = append(d.Curves, cv)
	}
	return d
}

func TestLook(t *testing.T) {
	if os.Getenv("RENDER_LOOK") == "" {
		t.Skip("set RENDER_LOOK=1 to write sample charts to " + lookDir)
	}
	if err := os.MkdirAll(lookDir, 0o755); err != nil {
		t.Fatal(err)
	}
	figs := map[string]func() (*Figure, error){
		"centile": func() (*Figure, error) { return CentileChart(sampleCentiles(true)) },
		"centile-plain": func() (*Figure, error) {
			c := sampleCentiles(false)
			c.Children = nil
			return CentileChart(c)
		},
		"centile-crowded": func() (*Figure, error) {
			c := sampleCentiles(false)
			c.Curves = nil
			for _, cc := range []float64{0.4, 1, 2, 3, 5, 10, 25, 50, 75, 90, 95, 97, 98, 99, 99.6} {
				z := distuv.UnitNormal.Quantile(cc / 100)
				cv := Curve{Centile: cc}
				for a := 0.0; a <= 24; a += 0.25 {
					cv.Ages = append(cv.Ages, a)
					cv.Values = append(cv.Values, lmsValue(a, z))
				}
				c.Curves = append(c.Curves, cv)
			}
			c.Children = c.Children[:1]
			c.Children[0].Label = "a child with a rather long label"
			c.Stratum = ""
			return CentileChart(c, WithHue(35))
		},
		"worm":  func() (*Figure, error) { return WormChart(sampleWorm()) },
		"zdist": func() (*Figure, error) { return ZDistChart(sampleZDist()) },
		"diff":  func() (*Figure, error) { return DiffChart(sampleDiff()) },
	}
	figs["worm8"] = func() (*Figure, error) {
		w := sampleWorm()
		w.Groups = append(w.Groups, w.Groups[0], w.Groups[1])
		w.Groups[6].Label, w.Groups[7].Label = "60–84 months", "84–120 months"
		return WormChart(w)
	}
	for name, mk := range figs {
		f, err := mk()
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		for _, ext := range []string{".png", ".svg", ".pdf"} {
			if err := Save(filepath.Join(lookDir, name+ext), f, "", 0, 0); err != nil {
				t.Fatal(err)
			}
		}
	}
	// A small chart, as in a narrow report column.
	f, err := CentileChart(sampleCentiles(true), WithFontSize(8))
	if err != nil {
		t.Fatal(err)
	}
	if err := Save(filepath.Join(lookDir, "centile-small.png"), f, "", 12*vg.Centimeter, 9*vg.Centimeter); err != nil {
		t.Fatal(err)
	}
}

func vgl(v float64) vg.Length { return vg.Length(v) }
