package curve

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestEndSupportLegendre checks endSupport against a closed form: for
// least squares on a polynomial of degree 3 (a cubic B-spline basis with
// no interior knot spans the same space) with ages spread evenly over an
// interval, the leverage of the end point is sum_{k=0..3} (2k+1) P_k(1)^2
// / n = 16/n, the reciprocal of the Christoffel function of the Legendre
// polynomials at the end (Szegő 1939, Orthogonal Polynomials, section
// 3.1; P_k(1) = 1). So the curves at each end rest on n/16 rows' worth.
func TestEndSupportLegendre(t *testing.T) {
	const n = 20001
	d := &Data{}
	for i := range n {
		d.Age = append(d.Age, 10*float64(i)/(n-1))
		d.Value = append(d.Value, 1)
	}
	c, err := (&Settings{Knots: NoKnots}).resolve()
	if err != nil {
		t.Fatal(err)
	}
	groups, _, err := prepare(d, c)
	if err != nil {
		t.Fatal(err)
	}
	m, err := newModel(groups[0], nil, c.degree, c.order)
	if err != nil {
		t.Fatal(err)
	}
	lo, hi, err := endSupport(m, groups[0])
	if err != nil {
		t.Fatal(err)
	}
	// The closed form is for ages continuous on the interval; n evenly
	// spaced points differ from it by O(1/n), here under 0.1%.
	want := float64(n) / 16
	for _, got := range []float64{lo, hi} {
		if math.Abs(got/want-1) > 1e-3 {
			t.Errorf("end support %.2f rows, want n/16 = %.2f", got, want)
		}
	}
	// Sampling weights in sandwich form: all weights equal to 3 change
	// nothing; weights that double half the rows lower the effective rows.
	groups[0].w = make([]float64, n)
	for i := range n {
		groups[0].w[i] = 3
	}
	if l3, _, _ := endSupport(m, groups[0]); math.Abs(l3/lo-1) > 1e-9 {
		t.Errorf("equal weights moved the end support from %.3f to %.3f", lo, l3)
	}
	for i := range n {
		groups[0].w[i] = float64(1 + i%2)
	}
	if l2, _, _ := endSupport(m, groups[0]); !(l2 < lo) {
		t.Errorf("unequal weights: end support %.3f, not below the equal-weight %.3f", l2, lo)
	}
}

// TestChooseAgeScaleThin: on a survey with ages spread evenly over 0–19
// years (simulated from the heightLike truth), the cube root of age
// stretches the first months over a third of the transformed range, so
// its curves at birth rest on a small fraction of the rows that the
// identity's rest on: ChooseAgeScale must pass it over with its reason, and
// choose a candidate that is not thin.
func TestChooseAgeScaleThin(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 7))
	d := &Data{}
	sample(rng, heightLike(12, 20), 4000, 0, 19, "", d)
	_, choices, _, err := ChooseAgeScale(d, &Settings{AgeRange: [2]float64{0, 19}, AgeUnit: "years"})
	if err != nil {
		t.Fatal(err)
	}
	sawCube := false
	for _, c := range choices {
		t.Logf("%-20s criterion %.5f problems %d chosen %v %s", c.Scale, c.Score, c.Problems, c.Chosen, c.Thin)
		if c.Scale.Kind == ScalePower && math.Abs(c.Scale.Power-1.0/3) < 1e-9 {
			sawCube = true
			if c.Thin == "" {
				t.Errorf("age^(1/3) on evenly spread ages 0–19 y not passed over")
			}
		}
		if c.Chosen && c.Thin != "" {
			t.Errorf("chosen scale %s is thin: %s", c.Scale, c.Thin)
		}
	}
	if !sawCube {
		t.Fatal("age^(1/3) not among the candidates")
	}
}

// TestEdgeJointNull checks the standard error edgeJoint gives the mean of
// the chart centiles' standardised departures against a simulation from a
// stated model: sample quantiles of n standard normals at the chart taus,
// each standardised by its asymptotic standard error sqrt(tau(1-tau)/n) /
// phi(z_tau) (Mosteller 1946, Annals of Mathematical Statistics 17,
// 377–408), averaged; the spread of that average over many samples must
// match the joint-normal formula within its own sampling error.
func TestEdgeJointNull(t *testing.T) {
	taus := []float64{0.03, 0.1, 0.25, 0.5, 0.75, 0.9, 0.97}
	n, reps := 4000, 1500
	if testing.Short() {
		reps = 400
	}
	var j edgeJoint
	for _, tau := range taus {
		j.add(tau, 0, 0, 0, 0)
	}
	se := j.se()
	rng := rand.New(rand.NewPCG(8, 8))
	x := make([]float64, n)
	var s1, s2 float64
	for range reps {
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		slices.Sort(x)
		m := 0.0
		for _, tau := range taus {
			q := x[int(math.Ceil(tau*float64(n)))-1]
			m += (q - normZ(tau)) / (math.Sqrt(tau*(1-tau)/float64(n)) / normalPDF(normZ(tau)))
		}
		m /= float64(len(taus))
		s1, s2 = s1+m, s2+m*m
	}
	mean := s1 / float64(reps)
	sd := math.Sqrt(s2/float64(reps) - mean*mean)
	// The SD of a sample SD from reps normal values is about sd/sqrt(2 reps);
	// 4 of those is the tolerance.
	tol := 4 * se / math.Sqrt(2*float64(reps))
	t.Logf("joint SE %.4f by formula, %.4f simulated (tolerance %.4f)", se, sd, tol)
	if math.Abs(sd-se) > tol {
		t.Errorf("simulated SD %.4f of the mean standardised departure, formula %.4f", sd, se)
	}
}
