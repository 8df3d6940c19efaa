package intake

import "slices"

// Conditional is the [conditional] table: a model of growth since the
// previous visit of the same child, fitted beside the ordinary curves. A
// Plan without the table has Conditional nil; an empty table means every
// default.
type Conditional struct {
	// GapMin and GapMax bound the modelled gaps between visits in
	// Measure.AgeUnit; both zero means chosen from the data.
	GapMin, GapMax float64
	AgeKnots       int       // interior knots in age; 0 = the fitting code's default
	ZKnots         int       // interior knots in the previous z-score; 0 = default
	Centiles       []float64 // conditional tau grid in percent; nil = default
	TableGap       float64   // gap tabulated in conditional.csv; 0 = middle of the modelled gaps
}

type rawConditional struct {
	Gap      raw `toml:"gap"`
	AgeKnots raw `toml:"age_knots"`
	ZKnots   raw `toml:"z_knots"`
	Centiles raw `toml:"centiles"`
	TableGap raw `toml:"table_gap"`
}

// maxCondKnots bounds the knot counts of the conditional model so that a
// typo cannot ask for a surface no data could support.
const maxCondKnots = 20

// conditional reads the [conditional] table when the plan has one.
func (d *planDecoder) conditional(rc *rawConditional, present bool, in *Input) *Conditional {
	if !present {
		return nil
	}
	c := &Conditional{}
	if in.Subject == "" {
		d.fail("conditional", ErrPlanValue, "conditional: needs input.subject to pair each visit with the same child's previous visit")
	}
	if rc.Gap.set {
		if s, isStr := rc.Gap.v.(string); !isStr || s != "auto" {
			xs, ok := d.numList("conditional.gap", rc.Gap.v)
			switch {
			case !ok:
			case len(xs) != 2 || !(xs[0] >= 0 && xs[0] < xs[1]) || xs[1] > maxGapValue:
				d.fail("conditional.gap", ErrPlanValue, "conditional.gap: want \"auto\" or [min, max] with 0 <= min < max, finite")
			default:
				c.GapMin, c.GapMax = xs[0], xs[1]
			}
		}
	}
	if rc.AgeKnots.set {
		if n, ok := d.int("conditional.age_knots", rc.AgeKnots, 0, maxCondKnots); ok {
			c.AgeKnots = int(n)
			if n == 0 {
				c.AgeKnots = -1 // no interior knots: a single cubic
			}
		}
	}
	if rc.ZKnots.set {
		if n, ok := d.int("conditional.z_knots", rc.ZKnots, 0, maxCondKnots); ok {
			c.ZKnots = int(n)
			if n == 0 {
				c.ZKnots = -1
			}
		}
	}
	if rc.Centiles.set {
		if xs, ok := d.numList("conditional.centiles", rc.Centiles.v); ok {
			sorted := slices.IsSorted(xs) && len(slices.Compact(slices.Clone(xs))) == len(xs)
			inside := !slices.ContainsFunc(xs, func(x float64) bool { return !(x > 0 && x < 100) })
			switch {
			case !sorted || !inside:
				d.fail("conditional.centiles", ErrPlanValue, "conditional.centiles: want increasing centiles strictly between 0 and 100")
			case !slices.Contains(xs, 50):
				d.fail("conditional.centiles", ErrPlanValue, "conditional.centiles: must include 50 (the fit starts at the median)")
			default:
				c.Centiles = xs
			}
		}
	}
	if rc.TableGap.set {
		if x, ok := d.num("conditional.table_gap", rc.TableGap); ok {
			if !(x > 0 && x <= maxGapValue) {
				d.fail("conditional.table_gap", ErrPlanValue, "conditional.table_gap: want a gap above 0")
			} else if c.GapMax > 0 && !(x >= c.GapMin && x <= c.GapMax) {
				d.fail("conditional.table_gap", ErrPlanValue, "conditional.table_gap: %g is outside conditional.gap [%g, %g]", x, c.GapMin, c.GapMax)
			} else {
				c.TableGap = x
			}
		}
	}
	return c
}

// maxGapValue bounds conditional.gap (any unit): beyond it a value is a typo.
const maxGapValue = 1e6
