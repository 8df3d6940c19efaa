package intake

import "slices"

// Covariates is the [covariates] table: columns whose effect on the chart
// centiles the build estimates, each with standard errors, intervals and
// p-values, in a quantile regression on B-splines in age plus the
// covariates. A Plan without the table has Covariates nil.
type Covariates struct {
	Numeric     []string // numeric columns, entering linearly
	Categorical []string // categorical columns, one indicator per level but the first
	Method      string   // "sandwich", "powell" or "bootstrap"
	Replicates  int      // bootstrap replicates; 0 = the fitting code's default
	AgeKnots    int      // interior knots of the age splines; 0 = default, -1 = none
}

type rawCovariates struct {
	Numeric     raw `toml:"numeric"`
	Categorical raw `toml:"categorical"`
	Method      raw `toml:"method"`
	Replicates  raw `toml:"replicates"`
	AgeKnots    raw `toml:"age_knots"`
}

// covariates reads the [covariates] table when the plan has one.
func (d *planDecoder) covariates(rc *rawCovariates, present bool, in *Input) *Covariates {
	if !present {
		return nil
	}
	c := &Covariates{Method: "sandwich"}
	if rc.Numeric.set {
		c.Numeric, _ = d.strList("covariates.numeric", rc.Numeric)
	}
	if rc.Categorical.set {
		c.Categorical, _ = d.strList("covariates.categorical", rc.Categorical)
	}
	all := append(slices.Clone(c.Numeric), c.Categorical...)
	if len(all) == 0 && !d.failed("covariates.numeric") && !d.failed("covariates.categorical") {
		d.fail("covariates", ErrPlanValue, "covariates: name at least one column in numeric or categorical")
	}
	used := []string{in.Age, in.Birth, in.Measured, in.Value, in.Stratum, in.Subject, in.Weight}
	for i, col := range all {
		key := "covariates.numeric"
		if i >= len(c.Numeric) {
			key = "covariates.categorical"
		}
		switch {
		case col == "":
			d.fail(key, ErrPlanValue, "%s: empty column name", key)
		case slices.Contains(all[:i], col):
			d.fail(key, ErrPlanValue, "%s: column %q named twice", key, col)
		case slices.Contains(used, col):
			d.fail(key, ErrPlanValue, "%s: column %q is already used in [input]", key, col)
		}
	}
	if rc.Method.set {
		c.Method, _ = d.oneOf("covariates.method", rc.Method, "sandwich", "powell", "bootstrap")
	}
	if rc.Replicates.set {
		if n, ok := d.int("covariates.replicates", rc.Replicates, 20, maxBootstrap); ok {
			c.Replicates = int(n)
		}
	}
	if rc.AgeKnots.set {
		if n, ok := d.int("covariates.age_knots", rc.AgeKnots, 0, maxCondKnots); ok {
			c.AgeKnots = int(n)
			if n == 0 {
				c.AgeKnots = -1
			}
		}
	}
	return c
}

// failed reports whether an error was already recorded for key's line.
func (d *planDecoder) failed(key string) bool {
	line := lineOf(d.lines, key)
	for _, e := range d.errs {
		if e.Line == line {
			return true
		}
	}
	return false
}
