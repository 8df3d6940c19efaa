package intake

import (
	"math"
	"slices"

	"growband/internal/ageunit"
)

// plan converts the raw values to a Plan, applying defaults and checking
// each value; problems are collected in d.
func (d *planDecoder) plan(rp *rawPlan) *Plan {
	p := &Plan{}
	in, ri := &p.Input, &rp.Input

	// Column names.
	for _, c := range []struct {
		key string
		r   raw
		dst *string
	}{
		{"input.file", ri.File, &in.File}, {"input.age", ri.Age, &in.Age}, {"input.birth", ri.Birth, &in.Birth},
		{"input.measured", ri.Measured, &in.Measured}, {"input.value", ri.Value, &in.Value},
		{"input.stratum", ri.Stratum, &in.Stratum}, {"input.subject", ri.Subject, &in.Subject},
		{"input.weight", ri.Weight, &in.Weight},
	} {
		if !c.r.set {
			continue
		}
		if s, ok := d.str(c.key, c.r); ok {
			if s == "" {
				d.fail(c.key, ErrPlanValue, "%s: must not be empty (leave the key out instead)", c.key)
			}
			*c.dst = s
		}
	}
	if !ri.File.set {
		d.fail("input", ErrPlanValue, "input.file: missing: name the CSV file with the measurements")
	}
	if !ri.Value.set {
		d.fail("input", ErrPlanValue, "input.value: missing: name the column with the measurement")
	}
	switch {
	case ri.Age.set && (ri.Birth.set || ri.Measured.set):
		d.fail("input.age", ErrPlanValue, "input.age: give either age or birth and measured, not both")
	case !ri.Age.set && ri.Birth.set != ri.Measured.set:
		key := "input.birth"
		if ri.Measured.set {
			key = "input.measured"
		}
		d.fail(key, ErrPlanValue, "input.birth and input.measured must be given together")
	case !ri.Age.set && !ri.Birth.set:
		d.fail("input", ErrPlanValue, "input.age: missing: name the age column, or give birth and measured date columns")
	}
	d.distinctColumns(in)

	// Measure.
	rm := &rp.Measure
	p.Measure = Measure{Name: in.Value, AgeUnit: "months"}
	if rm.Name.set {
		p.Measure.Name, _ = d.str("measure.name", rm.Name)
	}
	if rm.Unit.set {
		p.Measure.Unit, _ = d.str("measure.unit", rm.Unit)
		if err := CheckUnit(p.Measure.Unit); err != nil {
			d.fail("measure.unit", ErrPlanValue, "measure.unit: %v", err)
		}
	}
	if rm.AgeUnit.set {
		if v, ok := d.str("measure.age_unit", rm.AgeUnit); ok {
			u, err := ageunit.Parse(v)
			if err != nil {
				d.fail("measure.age_unit", ErrPlanValue, "measure.age_unit: %v", err)
			}
			p.Measure.AgeUnit = u.String()
		}
	}

	// Reading options.
	in.Unit = p.Measure.Unit
	if ri.Unit.set {
		if s, ok := d.str("input.unit", ri.Unit); ok {
			in.Unit = s
			if err := CheckUnit(s); err != nil {
				d.fail("input.unit", ErrPlanValue, "input.unit: %v", err)
			} else if _, err := unitFactor(s, p.Measure.Unit); err != nil {
				d.fail("input.unit", ErrPlanValue, "input.unit: %v", err)
			}
		}
	}
	if ri.Delimiter.set {
		if v, ok := d.str("input.delimiter", ri.Delimiter); ok {
			var err error
			if in.Delimiter, err = ParseDelimiter(v); err != nil {
				d.fail("input.delimiter", ErrPlanValue, "input.delimiter: %v", err)
			}
		}
	}
	if ri.Decimal.set {
		if v, ok := d.str("input.decimal", ri.Decimal); ok {
			var err error
			if in.Decimal, err = ParseDecimal(v); err != nil {
				d.fail("input.decimal", ErrPlanValue, "input.decimal: %v", err)
			}
		}
	}
	if ri.Sheet.set {
		in.Sheet, _ = d.str("input.sheet", ri.Sheet)
	}
	in.Missing = slices.Clone(DefaultMissing)
	if ri.Missing.set {
		if m, ok := d.strList("input.missing", ri.Missing); ok {
			in.Missing = m
		}
	}
	in.DateFormat = DefaultDateFormat
	if ri.DateFormat.set {
		if s, ok := d.oneOf("input.date_format", ri.DateFormat, DateFormats()...); ok {
			in.DateFormat = s
		}
	}
	if ri.StratumCodes.set {
		in.StratumCodes = d.codes(ri.StratumCodes)
		if !ri.Stratum.set {
			d.fail("input.stratum_codes", ErrPlanValue, "input.stratum_codes: given without an input.stratum column")
		}
	}

	p.Fit = d.fit(&rp.Fit)
	p.Plausible = d.plausible(rp, &p.Measure)
	p.Table = d.grid(rp)
	p.Output = d.output(rp)
	p.Conditional = d.conditional(&rp.Conditional, d.hasConditional, in)
	p.Covariates = d.covariates(&rp.Covariates, d.hasCovariates, in)
	return p
}

func (d *planDecoder) distinctColumns(in *Input) {
	seen := map[string]string{}
	for _, c := range [][2]string{{"input.age", in.Age}, {"input.birth", in.Birth}, {"input.measured", in.Measured},
		{"input.value", in.Value}, {"input.stratum", in.Stratum}, {"input.subject", in.Subject}, {"input.weight", in.Weight}} {
		if c[1] == "" {
			continue
		}
		if other, dup := seen[c[1]]; dup {
			d.fail(c[0], ErrPlanValue, "%s: column %q is already used for %s", c[0], c[1], other)
			continue
		}
		seen[c[1]] = c[0]
	}
}

func (d *planDecoder) codes(r raw) map[string]string {
	const key = "input.stratum_codes"
	m, ok := r.v.(map[string]any)
	if !ok {
		d.fail(key, ErrType, "%s: want a table of code = \"label\" pairs, got %s", key, describe(r.v))
		return nil
	}
	out := make(map[string]string, len(m))
	for code, v := range m {
		sub := key + "." + code
		label, ok := v.(string)
		if !ok {
			d.fail(sub, ErrType, "%s: want a label string, got %s", sub, describe(v))
			continue
		}
		if label == "" {
			d.fail(sub, ErrPlanValue, "%s: label must not be empty", sub)
			continue
		}
		out[code] = label
	}
	return out
}

func (d *planDecoder) fit(rf *rawFit) Fit {
	f := Fit{
		Centiles: slices.Clone(DefaultCentiles),
		Knots:    Knots{Auto: true},
		Penalty:  Penalty{Auto: true},
		AgeScale: AgeScale{Kind: "auto"},
		Seed:     DefaultSeed,
	}
	if rf.Centiles.set {
		if c, ok := d.numList("fit.centiles", rf.Centiles.v); ok {
			f.Centiles = d.centiles(c)
		}
	}
	if rf.Knots.set {
		f.Knots = d.knots(rf.Knots)
	}
	if rf.Penalty.set {
		const key = "fit.penalty"
		if s, isStr := rf.Penalty.v.(string); isStr {
			if s != "auto" {
				d.fail(key, ErrPlanValue, "%s: want \"auto\" or a number >= 0, got %s", key, describe(s))
			}
		} else if x, ok := d.num(key, rf.Penalty); ok {
			if x < 0 {
				d.fail(key, ErrPlanValue, "%s: %g is negative", key, x)
			}
			f.Penalty = Penalty{Lambda: x}
		}
	}
	if rf.AgeScale.set {
		const key = "fit.age_scale"
		if s, isStr := rf.AgeScale.v.(string); isStr {
			switch s {
			case "auto", "identity", "log":
				f.AgeScale.Kind = s
			default:
				d.fail(key, ErrPlanValue, "%s: want \"auto\", \"identity\", \"log\" or a power such as 0.5, got %s", key, describe(s))
			}
		} else if x, ok := d.num(key, rf.AgeScale); ok {
			switch {
			case !(x > 0):
				d.fail(key, ErrPlanValue, "%s: power %g must be positive", key, x)
			case x == 1:
				f.AgeScale.Kind = "identity"
			default:
				f.AgeScale = AgeScale{Kind: "power", Power: x}
			}
		}
	}
	if f.AgeScale.Kind == "log" {
		f.AgeScale.AutoShift = true
	}
	if rf.AgeOffset.set {
		const key = "fit.age_offset"
		if f.AgeScale.Kind != "log" {
			d.fail(key, ErrPlanValue, "%s: applies only with age_scale = \"log\"", key)
		} else if s, isStr := rf.AgeOffset.v.(string); isStr {
			if s != "auto" {
				d.fail(key, ErrPlanValue, "%s: want \"auto\" or a number, got %s", key, describe(s))
			}
		} else if x, ok := d.num(key, rf.AgeOffset); ok {
			f.AgeScale.Shift, f.AgeScale.AutoShift = x, false
		}
	}
	if rf.AgeRange.set {
		const key = "fit.age_range"
		if r, ok := d.rangeVal(key, rf.AgeRange); ok {
			if math.IsInf(r.Min, 0) || math.IsInf(r.Max, 0) {
				d.fail(key, ErrPlanValue, "%s: both ends must be finite", key)
			} else {
				f.AgeRange = r
			}
		}
	}
	if rf.AcceptEdg.set {
		f.AcceptEdges, _ = d.boolean("fit.accept_edge_problems", rf.AcceptEdg)
	}
	if rf.Bootstrap.set {
		n, _ := d.int("fit.bootstrap", rf.Bootstrap, 0, maxBootstrap)
		f.Bootstrap = int(n)
	}
	if rf.Seed.set {
		if n, ok := d.int("fit.seed", rf.Seed, math.MinInt64, math.MaxInt64); ok {
			f.Seed = n
		}
	}
	return f
}

func (d *planDecoder) centiles(c []float64) []float64 {
	const key = "fit.centiles"
	if len(c) == 0 {
		d.fail(key, ErrPlanValue, "%s: give at least one centile", key)
		return nil
	}
	c = slices.Clone(c)
	slices.Sort(c)
	for i, x := range c {
		if !(x > 0 && x < 100) {
			d.fail(key, ErrPlanValue, "%s: %g is not strictly between 0 and 100", key, x)
			return nil
		}
		if i > 0 && x == c[i-1] {
			d.fail(key, ErrPlanValue, "%s: %g is given twice", key, x)
			return nil
		}
	}
	return c
}

func (d *planDecoder) knots(r raw) Knots {
	const key = "fit.knots"
	switch v := r.v.(type) {
	case string:
		if v != "auto" {
			d.fail(key, ErrPlanValue, "%s: want \"auto\", a count or a list of ages, got %s", key, describe(v))
		}
		return Knots{Auto: true}
	case []any:
		at, ok := d.numList(key, v)
		if !ok {
			return Knots{Auto: true}
		}
		for i, x := range at {
			if math.IsInf(x, 0) {
				d.fail(key, ErrPlanValue, "%s: item %d is not finite", key, i+1)
				break
			}
			if i > 0 && !(x > at[i-1]) {
				d.fail(key, ErrPlanValue, "%s: knots must be strictly increasing (%g after %g)", key, x, at[i-1])
				break
			}
		}
		return Knots{Count: len(at), At: at}
	}
	n, ok := whole(r.v)
	if !ok {
		d.fail(key, ErrType, "%s: want \"auto\", a whole number or a list of ages, got %s", key, describe(r.v))
		return Knots{Auto: true}
	}
	if n < 0 || n > maxKnotCount {
		d.fail(key, ErrPlanValue, "%s: %d interior knots is outside [0, %d]", key, n, maxKnotCount)
		return Knots{Auto: true}
	}
	return Knots{Count: int(n)}
}

func (d *planDecoder) plausible(rp *rawPlan, m *Measure) Plausible {
	pl := Plausible{Age: Range{Min: 0, Max: inf}, Z: DefaultZLimit}
	pl.Value, _ = plausibleDefault(m.Name, m.Unit)
	r := &rp.Plausible
	if r.Value.set {
		pl.Value, _ = d.rangeVal("plausible.value", r.Value)
	}
	if r.Age.set {
		pl.Age, _ = d.rangeVal("plausible.age", r.Age)
	}
	if r.Z.set {
		if z, ok := d.num("plausible.z", r.Z); ok {
			if z < 0 {
				d.fail("plausible.z", ErrPlanValue, "plausible.z: %g is negative (0 turns the check off)", z)
			}
			pl.Z = z
		}
	}
	return pl
}

func (d *planDecoder) grid(rp *rawPlan) AgeGrid {
	r := &rp.Table
	if !r.From.set && !r.To.set && !r.Step.set {
		return AgeGrid{}
	}
	if !r.From.set || !r.To.set || !r.Step.set {
		d.fail("table", ErrPlanValue, "table: give all of from, to and step, or none")
		return AgeGrid{}
	}
	from, ok1 := d.num("table.from", r.From)
	to, ok2 := d.num("table.to", r.To)
	step, ok3 := d.num("table.step", r.Step)
	if !ok1 || !ok2 || !ok3 {
		return AgeGrid{}
	}
	switch {
	case !(from < to):
		d.fail("table.to", ErrPlanValue, "table.to: %g is not above table.from %g", to, from)
	case !(step > 0):
		d.fail("table.step", ErrPlanValue, "table.step: %g must be positive", step)
	case (to-from)/step > maxGridPoints:
		d.fail("table.step", ErrPlanValue, "table.step: %g gives more than %d ages", step, maxGridPoints)
	default:
		return AgeGrid{From: from, To: to, Step: step, Set: true}
	}
	return AgeGrid{}
}

func (d *planDecoder) output(rp *rawPlan) Output {
	o := Output{Charts: []string{"svg"}}
	r := &rp.Output
	if r.Charts.set {
		if cs, ok := d.strList("output.charts", r.Charts); ok {
			o.Charts = cs
			for i, c := range cs {
				if !slices.Contains([]string{"svg", "png", "pdf"}, c) {
					d.fail("output.charts", ErrPlanValue, "output.charts: %q is not one of \"svg\", \"png\", \"pdf\"", c)
					break
				}
				if slices.Contains(cs[:i], c) {
					d.fail("output.charts", ErrPlanValue, "output.charts: %q is given twice", c)
					break
				}
			}
		}
	}
	if r.Points.set {
		o.Points, _ = d.boolean("output.points", r.Points)
	}
	if r.SD.set {
		o.SDCurves, _ = d.boolean("output.sd_curves", r.SD)
	}
	return o
}
