package curve

import (
	"cmp"
	"fmt"
	"maps"
	"math"
	"slices"

	"growband/spline"
)

// Age scale kinds. The zero AgeScale (Kind "") is the identity.
const (
	ScaleIdentity = "identity"
	ScaleLog      = "log"
	ScalePower    = "power"
	// ScaleAuto asks Build to choose the scale from the data
	// (ChooseAgeScale); Fit and Apply refuse it.
	ScaleAuto = "auto"
)

// Apply returns T(age), the transformed age on which the B-spline basis is
// defined:
//
//	identity: T(age) = age
//	log:      T(age) = log(age + Shift),  needs age + Shift > 0
//	power:    T(age) = age^Power,         needs age >= 0 and Power > 0
//
// Every kind is strictly increasing on its domain, so centile curves keep
// their order and knots at quantiles of T(age) are knots at quantiles of
// age. A transform that compresses the fast-changing early ages (log or a
// power below one) lets the knots and the penalty treat infancy and later
// childhood alike; growth references have long fitted their curves in a
// power of age (Cole, Freeman & Preece 1998, from memory).
//
// Apply returns an error wrapping ErrAgeScale for an invalid scale and one
// wrapping ErrAgeDomain for a NaN or infinite age or an age outside the
// domain; it never panics.
//
// References:
//   - Cole T J, Freeman J V, Preece M A (1998). British 1990 growth reference
//     centiles for weight, height, body mass index and head circumference
//     fitted by maximum penalized likelihood. Statistics in Medicine 17,
//     407–429.
func (s AgeScale) Apply(age float64) (float64, error) {
	if err := s.validate(); err != nil {
		return 0, err
	}
	if math.IsNaN(age) || math.IsInf(age, 0) {
		return 0, fmt.Errorf("%w: age %v", ErrAgeDomain, age)
	}
	switch s.Kind {
	case "", ScaleIdentity:
		return age, nil
	case ScaleLog:
		a := age + s.Shift
		if !(a > 0) {
			return 0, fmt.Errorf("%w: log scale needs age + shift > 0, got age %v, shift %v", ErrAgeDomain, age, s.Shift)
		}
		return math.Log(a), nil
	default: // ScalePower; validate rejected anything else
		if age < 0 {
			return 0, fmt.Errorf("%w: power scale needs age >= 0, got %v", ErrAgeDomain, age)
		}
		return math.Pow(age, s.Power), nil
	}
}

// validate reports an unknown kind or unusable parameters, wrapping
// ErrAgeScale.
func (s AgeScale) validate() error {
	switch s.Kind {
	case "", ScaleIdentity:
		if s.Shift != 0 || s.Power != 0 {
			return fmt.Errorf("%w: the identity scale takes no shift or power", ErrAgeScale)
		}
	case ScaleLog:
		if math.IsNaN(s.Shift) || math.IsInf(s.Shift, 0) {
			return fmt.Errorf("%w: log shift %v", ErrAgeScale, s.Shift)
		}
		if s.Power != 0 {
			return fmt.Errorf("%w: the log scale takes no power", ErrAgeScale)
		}
	case ScalePower:
		if !(s.Power > 0) || math.IsInf(s.Power, 0) {
			return fmt.Errorf("%w: power must be positive and finite, got %v", ErrAgeScale, s.Power)
		}
		if s.Shift != 0 {
			return fmt.Errorf("%w: the power scale takes no shift", ErrAgeScale)
		}
	default:
		return fmt.Errorf("%w: unknown kind %q (want %q, %q or %q)", ErrAgeScale, s.Kind, ScaleIdentity, ScaleLog, ScalePower)
	}
	return nil
}

// normal returns s with the empty kind spelled out, as stored in a Reference.
func (s AgeScale) normal() AgeScale {
	if s.Kind == "" {
		s.Kind = ScaleIdentity
	}
	return s
}

// invert returns the age with T(age) = t, for t in the image of the scale.
func (s AgeScale) invert(t float64) float64 {
	switch s.Kind {
	case ScaleLog:
		return math.Exp(t) - s.Shift
	case ScalePower:
		return math.Pow(t, 1/s.Power)
	}
	return t
}

// ScaleChoice is one candidate of the automatic age scale.
type ScaleChoice struct {
	Scale AgeScale
	// Score is the smoothness criterion at the candidate's chosen
	// smoothness, summed over strata (lower is better); NaN when the
	// candidate could not be fitted or was passed over before scoring
	// (Thin).
	Score float64
	// Problems counts the edge-check problems of the candidate's fit; -1
	// when it was not fitted (a better-scored candidate passed).
	Problems int
	Chosen   bool
	Err      string // why the candidate could not be scored, if so
	// Thin says why the candidate was passed over for resting its curves
	// at an end of the age range on too few rows (see EndSupportRatio); ""
	// when it was not.
	Thin string
}

// scaleSampleRows is the number of rows above which candidate age scales
// are scored on an age-stratified subsample (every k-th row in age order)
// of about this size; the reference itself is then fitted on all rows.
// 50,000 rows place the criterion's knot choice as well as the full data in
// the simulations of this package (measured) at a fraction of the cost.
const scaleSampleRows = 50000

// ageScaleCandidates returns the candidate scales of the automatic choice
// for ages in ageUnit: the identity, the powers 1/2 and 1/3 (when no age is
// negative), and log(age + c) with c one month and one year (plus the
// youngest age's distance below zero).
func ageScaleCandidates(ages []float64, ageUnit string) []AgeScale {
	month := autoLogShift(ages, ageUnit)
	lo := 0.0
	for _, a := range ages {
		lo = min(lo, a)
	}
	out := []AgeScale{{Kind: ScaleIdentity}}
	if lo >= 0 {
		out = append(out, AgeScale{Kind: ScalePower, Power: 0.5}, AgeScale{Kind: ScalePower, Power: 1.0 / 3})
	}
	year := 12*(month+lo) - lo
	return append(out, AgeScale{Kind: ScaleLog, Shift: month}, AgeScale{Kind: ScaleLog, Shift: year})
}

// ChooseAgeScale is the automatic age scale of Build. The candidates are the
// identity, age^(1/2) and age^(1/3) (when no age is negative), and log(age +
// c) with c one month and one year in Settings.AgeUnit (plus the youngest
// age's distance below zero). Each is scored by the smoothness criterion of
// the settings (Settings.Criterion, the same criterion that chooses knots
// and penalty, see Settings), each stratum at its own chosen smoothness,
// summed over strata. The check loss is measured on the same values whatever
// the scale, so the criterion compares scales as it compares knot counts: a
// scale that lets fewer coefficients follow early infancy and the later
// years alike scores better. The identity is scored first. Then every
// candidate's end support is computed with the knot counts the identity
// chose (endSupport: from the knots alone, before any fit, so all scales are
// compared at the same flexibility), and a candidate whose curves at an end
// of the range rest there on fewer than 1/EndSupportRatio of the rows' worth
// of the best-supported candidate is passed over (unscored, unless it is the
// identity), with the reason in ScaleChoice.Thin: the criterion, summed over
// all rows, hardly sees a scale that leaves the curves at birth to a few
// dozen newborns. The other candidates are scored. Candidates are then
// fitted in order of their score and the first whose fit passes the edge
// checks (CheckEdges) is chosen; a scale whose curves tie, hook or bend
// where the data do not is passed over even when its criterion is lower.
// When none passes, the best-scored one is returned with its problems.
//
// ChooseAgeScale returns the reference fitted on d with the chosen scale,
// the candidates and the chosen fit's edge problems. s.AgeScale is ignored.
func ChooseAgeScale(d *Data, s *Settings) (*Reference, []ScaleChoice, []EdgeProblem, error) {
	if s == nil {
		s = &Settings{}
	}
	if d == nil || len(d.Age) == 0 {
		return nil, nil, nil, fmt.Errorf("%w: no rows", ErrData)
	}
	is := *s
	is.AgeScale = AgeScale{}
	c, err := is.resolve()
	if err != nil {
		return nil, nil, nil, err
	}
	groups, hash, err := prepare(d, c)
	if err != nil {
		return nil, nil, nil, err
	}
	return chooseScale(d, groups, hash, s)
}

// chooseScale is ChooseAgeScale on the rows of d grouped and sorted by age
// (prepare; Build's row store), whose input hash is hash. Each candidate
// fitted recomputes the groups' T(age) (rescale); no rows are copied.
func chooseScale(d *Data, groups []*rows, hash string, fs *Settings) (*Reference, []ScaleChoice, []EdgeProblem, error) {
	youngest, total := math.Inf(1), 0
	for _, r := range groups {
		youngest = min(youngest, r.age[0])
		total += len(r.age)
	}
	cands := ageScaleCandidates([]float64{youngest}, fs.AgeUnit)
	subsampled := total > scaleSampleRows
	var pick []int
	if subsampled {
		// Every step-th row in age order over all strata (ties in input
		// order): a merge of the groups' age orders.
		step := (total + scaleSampleRows - 1) / scaleSampleRows
		pos := make([]int, len(groups))
		for k := 0; k < total; k++ {
			g := -1
			for h, r := range groups {
				if pos[h] == len(r.age) {
					continue
				}
				if g < 0 {
					g = h
					continue
				}
				a, b := r.age[pos[h]], groups[g].age[pos[g]]
				if a < b || (a == b && r.src[pos[h]] < groups[g].src[pos[g]]) {
					g = h
				}
			}
			if k%step == 0 {
				pick = append(pick, groups[g].src[pos[g]])
			}
			pos[g]++
		}
	} else {
		for _, r := range groups {
			pick = append(pick, r.src...)
		}
	}
	slices.Sort(pick)
	sample := d.rows(pick)
	prog := &progress{w: fs.Progress}
	choices := make([]ScaleChoice, len(cands))
	chosen := make([]map[string]*choice, len(cands))
	configs := make([]*config, len(cands))
	var firstErr error
	fail := func(i int, err error) {
		choices[i].Err = err.Error()
		if firstErr == nil {
			firstErr = err
		}
	}
	for i, sc := range cands {
		choices[i] = ScaleChoice{Scale: sc, Score: math.NaN(), Problems: -1}
		s := *fs
		s.AgeScale, s.Progress = sc, nil
		c, err := s.resolve()
		if err != nil {
			fail(i, err)
			continue
		}
		configs[i] = c
	}
	score := func(i int) {
		if choices[i].Err != "" || choices[i].Thin != "" {
			return
		}
		var err error
		if chosen[i], choices[i].Score, err = scoreScale(sample, configs[i]); err != nil {
			fail(i, err)
			return
		}
		prog.printf("age scale %s: criterion %.6g", cands[i], choices[i].Score)
	}
	// The identity (cands[0]) first: its knot counts are the common ground
	// on which every candidate's end support is measured, and a candidate
	// left thin there is passed over without being scored.
	score(0)
	if choices[0].Err == "" {
		knots := map[string]int{}
		for name, ch := range chosen[0] {
			knots[name] = len(ch.model.interior)
		}
		support := make([]map[string][2]float64, len(cands))
		var usable []int
		for i := range cands {
			if choices[i].Err != "" {
				continue
			}
			var err error
			if support[i], err = supportAt(sample, configs[i], knots); err != nil {
				fail(i, err)
				continue
			}
			usable = append(usable, i)
		}
		passOverThin(usable, cands, support, choices)
		for _, c := range choices {
			if c.Thin != "" {
				prog.printf("age scale %s passed over: %s", c.Scale, c.Thin)
			}
		}
	}
	for i := 1; i < len(cands); i++ {
		score(i)
	}
	order := make([]int, 0, len(cands))
	for i := range cands {
		if choices[i].Err == "" && choices[i].Thin == "" {
			order = append(order, i)
		}
	}
	if len(order) == 0 {
		return nil, choices, nil, fmt.Errorf("no usable age scale: %w", firstErr)
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(choices[a].Score, choices[b].Score) })
	var bestRef *Reference
	var bestProblems []EdgeProblem
	best := -1
	for _, i := range order {
		s := *fs
		s.AgeScale = cands[i]
		c, err := s.resolve()
		if err != nil {
			return nil, nil, nil, err
		}
		pre := chosen[i]
		if subsampled {
			pre = nil
		}
		if err := rescale(groups, c); err != nil {
			return nil, nil, nil, err
		}
		ref, err := fitGroups(groups, hash, &s, c, pre)
		if err != nil {
			return nil, nil, nil, err
		}
		problems, err := checkEdgesRows(ref, groups)
		if err != nil {
			return nil, nil, nil, err
		}
		choices[i].Problems = len(problems)
		if best < 0 {
			best, bestRef, bestProblems = i, ref, problems
		}
		if len(problems) == 0 {
			best, bestRef, bestProblems = i, ref, nil
			break
		}
		prog.printf("age scale %s: %d edge problems (first: %s); trying the next", cands[i], len(problems), problems[0])
	}
	choices[best].Chosen = true
	return bestRef, choices, bestProblems, nil
}

// scoreScale chooses the smoothness of every stratum of d under c and
// returns the choices and the summed criterion.
func scoreScale(d *Data, c *config) (map[string]*choice, float64, error) {
	groups, err := groupRows(d, c)
	if err != nil {
		return nil, 0, err
	}
	pl := newPool(c.workers)
	c = c.sharedBy(len(groups))
	chs := make([]*choice, len(groups))
	err = parallel(len(groups), func(g int) error {
		ch, err := chooseSmoothness(pl, groups[g], c)
		if err != nil {
			return fmt.Errorf("stratum %q: %w", groups[g].name, err)
		}
		chs[g] = ch
		return nil
	})
	if err != nil {
		return nil, 0, err
	}
	out := map[string]*choice{}
	total := 0.0
	for g, ch := range chs {
		out[groups[g].name] = ch
		total += ch.smooth.Score
	}
	return out, total, nil
}

// supportAt returns the end support (endSupport) of every stratum of d
// under the age scale of c, with knots[stratum] interior knots at the
// quantiles of its T(age), as shares of its rows.
func supportAt(d *Data, c *config, knots map[string]int) (map[string][2]float64, error) {
	groups, err := groupRows(d, c)
	if err != nil {
		return nil, err
	}
	support := map[string][2]float64{}
	for _, r := range groups {
		var interior []float64
		if k := knots[r.name]; k > 0 {
			if interior, err = spline.QuantileKnots(r.t, k); err != nil {
				return nil, fmt.Errorf("%w: stratum %q: %w", ErrData, r.name, err)
			}
		}
		m, err := newModel(r, interior, c.degree, c.order)
		if err != nil {
			return nil, fmt.Errorf("stratum %q: %w", r.name, err)
		}
		lo, hi, err := endSupport(m, r)
		if err != nil {
			return nil, fmt.Errorf("stratum %q: %w", r.name, err)
		}
		n := float64(len(r.t))
		support[r.name] = [2]float64{lo / n, hi / n}
	}
	return support, nil
}

// passOverThin removes from order (candidate indices) those whose curves
// rest at an end of some stratum's range on fewer than 1/EndSupportRatio
// of the best-supported candidate's rows there, saying why in their
// ScaleChoice. The best-supported candidate of every end always stays, so
// order never empties.
func passOverThin(order []int, cands []AgeScale, support []map[string][2]float64, choices []ScaleChoice) []int {
	best := map[string][2]float64{}
	bestBy := map[string][2]int{}
	for _, i := range order {
		for name, s := range support[i] {
			b := best[name]
			by := bestBy[name]
			for e := range 2 {
				if s[e] > b[e] {
					b[e], by[e] = s[e], i
				}
			}
			best[name], bestBy[name] = b, by
		}
	}
	var kept []int
	for _, i := range order {
		thin := ""
		// Strata in name order, so the reason given is the same every run.
		for _, name := range slices.Sorted(maps.Keys(support[i])) {
			s := support[i][name]
			for e, end := range []string{"youngest", "oldest"} {
				if thin == "" && s[e]*EndSupportRatio < best[name][e] {
					thin = fmt.Sprintf("stratum %s: the curves at the %s age rest on %.2g%% of the rows' worth, against %.2g%% under %s",
						stratumLabel(name), end, 100*s[e], 100*best[name][e], cands[bestBy[name][e]])
				}
			}
		}
		if thin != "" {
			choices[i].Thin = thin
			continue
		}
		kept = append(kept, i)
	}
	return kept
}

// String writes the scale as a formula: "age", "age^0.5", "log(age + 1)".
func (s AgeScale) String() string {
	switch s.Kind {
	case ScaleLog:
		return fmt.Sprintf("log(age + %.4g)", s.Shift)
	case ScalePower:
		return fmt.Sprintf("age^%.4g", s.Power)
	case ScaleAuto:
		return "auto"
	}
	return "age"
}
