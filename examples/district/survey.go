package district

import (
	"fmt"
	"math"
	"strconv"
	"time"
)

// Row is one visit: the cells written to the CSV, plus the truth behind them.
type Row struct {
	ChildID string // e.g. "TW00042"; the same for all visits of a child
	Visit   int    // 1 for a child's first visit, 2 for the second, ...
	Clinic  string
	Area    string // survey stratum: "town" or "hills"
	// SexCode is the sex cell as recorded: "F"/"M", or "1" (male) / "2"
	// (female) at Highmoor Mobile Team. Sex is the true sex, "F" or "M".
	SexCode string
	Sex     string
	// BirthDate and VisitDate are as recorded (exchanged in dates-swapped
	// rows). AgeMonths is (VisitDate - BirthDate) in days / (365.25/12),
	// rounded to two decimals, as in the age_months column; it is negative
	// in dates-swapped rows, whose true age is -AgeMonths.
	BirthDate    time.Time
	VisitDate    time.Time
	AgeMonths    float64
	WeightCell   string  // the weight_kg cell as recorded
	LengthCell   string  // the length_cm cell as recorded
	SurveyWeight float64 // sampling weight of the child's stratum

	// WeightKg and LengthCm are the true values (to 0.1), before any
	// recording fault; in a clean row they are what the cells say.
	WeightKg float64
	LengthCm float64
	// Fault is the deliberate recording error in this row, NoFault if none.
	// FaultIn is the measure whose cell carries it, or "" when the fault
	// is not in a measurement cell (dates-swapped, duplicate).
	Fault   Fault
	FaultIn Measure
}

// Clean reports whether the row is free of any recording error that affects
// a build of measure m: a fault in the other measure's cell does not count.
func (r Row) Clean(m Measure) bool {
	return r.Fault == NoFault || (r.FaultIn != "" && r.FaultIn != m)
}

// Value returns the true value of measure m in the row (WeightKg or
// LengthCm). It panics on an unknown measure.
func (r Row) Value(m Measure) float64 {
	switch m {
	case Weight:
		return r.WeightKg
	case Length:
		return r.LengthCm
	}
	panic(fmt.Sprintf("district: unknown measure %q", m))
}

// Survey design. See doc.go for the scenario these numbers describe.
const (
	children     = 6000
	repeatPer10  = 3    // children in 10 seen more than once
	minGapDays   = 45   // shortest time between two visits of a child
	maxGapDays   = 200  // longest
	maxAgeDays   = 1826 // last whole day before 60 months (60 * 365.25/12 = 1826.25)
	infantPer5   = 1    // single-visit children in 5 drawn from the first year only
	startSpread  = 600  // first visits fall on one of this many days
	daysPerMonth = 365.25 / 12
	boysPer1000  = 512
	weightOnLen  = 0.6  // weight z = 0.6 length z + 0.8 independent normal
	driftKeep    = 0.95 // z' = 0.95 z + sqrt(1 - 0.95^2) e between visits
)

// firstVisitDay is the earliest possible first visit.
var firstVisitDay = time.Date(2023, time.January, 2, 0, 0, 0, 0, time.UTC)

type clinic struct {
	name       string
	area       string
	percent    int  // share of children
	numericSex bool // "1" male, "2" female instead of "M"/"F"
	weight     float64
}

var clinics = []clinic{
	{name: "Tarnwick Town Clinic", area: "town", percent: 35, weight: 1.25},
	{name: "Eastquay Clinic", area: "town", percent: 25, weight: 1.25},
	{name: "Fellside Health Post", area: "hills", percent: 22, weight: 3.40},
	{name: "Highmoor Mobile Team", area: "hills", percent: 18, numericSex: true, weight: 3.40},
}

// Generate returns the whole survey, rows ordered by child and visit, with
// the recording errors in place. Every call returns the same rows.
func Generate() []Row {
	return generate(newStream(seedHi, seedLo))
}

func generate(g *stream) []Row {
	rows := make([]Row, 0, children*16/10)
	for c := 1; c <= children; c++ {
		rows = appendChild(rows, g, c)
	}
	return injectFaults(rows, g)
}

func pickClinic(g *stream) clinic {
	k := g.intn(100)
	for _, c := range clinics {
		if k < c.percent {
			return c
		}
		k -= c.percent
	}
	panic("district: clinic shares do not add up to 100")
}

// appendChild draws one child and appends all of its visits.
func appendChild(rows []Row, g *stream, num int) []Row {
	cl := pickClinic(g)
	sex := "F"
	if g.intn(1000) < boysPer1000 {
		sex = "M"
	}
	code := sex
	if cl.numericSex {
		code = "2"
		if sex == "M" {
			code = "1"
		}
	}

	visits := 1
	if g.intn(10) < repeatPer10 {
		visits = 2 + g.intn(3)
	}
	gaps := make([]int, visits-1)
	span := 0
	for i := range gaps {
		gaps[i] = minGapDays + g.intn(maxGapDays-minGapDays+1)
		span += gaps[i]
	}
	var ageDays int
	switch {
	case visits > 1:
		ageDays = g.intn(maxAgeDays - span + 1)
	case g.intn(5) < infantPer5:
		ageDays = g.intn(366)
	default:
		ageDays = g.intn(maxAgeDays + 1)
	}
	birth := firstVisitDay.AddDate(0, 0, g.intn(startSpread)-ageDays)

	lengthScore := g.normal()
	weightScore := weightOnLen*lengthScore + math.Sqrt(1-weightOnLen*weightOnLen)*g.normal()
	innov := math.Sqrt(1 - driftKeep*driftKeep)
	for v := 0; v < visits; v++ {
		if v > 0 {
			ageDays += gaps[v-1]
			lengthScore = driftKeep*lengthScore + innov*g.normal()
			weightScore = driftKeep*weightScore + innov*g.normal()
		}
		age := round(float64(ageDays)/daysPerMonth, 2)
		w := round(valueAt(Weight, sex, age, weightScore), 1)
		h := round(valueAt(Length, sex, age, lengthScore), 1)
		rows = append(rows, Row{
			ChildID:      fmt.Sprintf("TW%05d", num),
			Visit:        v + 1,
			Clinic:       cl.name,
			Area:         cl.area,
			SexCode:      code,
			Sex:          sex,
			BirthDate:    birth,
			VisitDate:    birth.AddDate(0, 0, ageDays),
			AgeMonths:    age,
			WeightCell:   strconv.FormatFloat(w, 'f', 1, 64),
			LengthCell:   strconv.FormatFloat(h, 'f', 1, 64),
			SurveyWeight: cl.weight,
			WeightKg:     w,
			LengthCm:     h,
		})
	}
	return rows
}

// valueAt is the true value at z-score z.
func valueAt(m Measure, sex string, age, z float64) float64 {
	l, mu, s := TrueLMS(m, sex, age)
	return boxCoxValue(l, mu, s, z)
}

// round rounds x to the given number of decimals, halves away from zero.
func round(x float64, decimals int) float64 {
	p := math.Pow10(decimals)
	return math.Round(x*p) / p
}
