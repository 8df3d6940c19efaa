package district

import (
	"math"
	"strconv"
	"strings"
)

// Fault names a kind of deliberate recording error.
type Fault string

// The recording errors planted in the survey; doc.go lists how many rows of
// each kind there are and what they look like.
const (
	NoFault           Fault = ""
	FaultMissing      Fault = "missing"            // empty weight or length cell
	FaultNotNumber    Fault = "not-a-number"       // "12,4", "n/a" or "?"
	FaultGrams        Fault = "grams"              // weight written in grams
	FaultDatesSwapped Fault = "dates-swapped"      // visit date before birth date
	FaultDuplicate    Fault = "duplicate"          // exact copy of the previous row
	FaultLength       Fault = "impossible-length"  // length with its decimal point lost
	FaultWeight       Fault = "implausible-weight" // weight with its decimal point lost or shifted
)

// plantedFaults lists how many rows get each fault, in the order they are
// handed out along one random permutation of the rows.
var plantedFaults = []struct {
	kind Fault
	rows int
}{
	{FaultMissing, 84},
	{FaultNotNumber, 30},
	{FaultGrams, 3},
	{FaultDatesSwapped, 3},
	{FaultLength, 3},
	{FaultWeight, 5},
	{FaultDuplicate, 3},
}

// notNumber lists the non-numeric entries, used in turn.
var notNumber = []struct {
	in   Measure
	cell func(good string) string
}{
	{Weight, decimalComma},
	{Length, decimalComma},
	{Weight, func(string) string { return "n/a" }},
	{Length, func(string) string { return "n/a" }},
	{Weight, func(string) string { return "?" }},
}

func decimalComma(good string) string { return strings.Replace(good, ".", ",", 1) }
func decimalLost(good string) string  { return strings.Replace(good, ".", "", 1) }

// injectFaults plants the recording errors: it walks a random permutation of
// the rows and gives each kind its number of rows in turn. A dates-swapped
// row must be at least a month old, so that its visit date clearly precedes
// its birth date; younger picks are passed over. Duplicates are inserted
// right after their (clean) original.
func injectFaults(rows []Row, g *stream) []Row {
	perm := make([]int, len(rows))
	for i := range perm {
		perm[i] = i
	}
	for i := len(perm) - 1; i > 0; i-- { // Fisher–Yates
		j := g.intn(i + 1)
		perm[i], perm[j] = perm[j], perm[i]
	}

	duplicate := make(map[int]bool)
	next := 0
	for _, pf := range plantedFaults {
		for k := 0; k < pf.rows; {
			r := &rows[perm[next]]
			next++
			if pf.kind == FaultDatesSwapped && r.AgeMonths < 1 {
				continue
			}
			switch pf.kind {
			case FaultDuplicate:
				duplicate[perm[next-1]] = true
			default:
				plant(r, pf.kind, k)
			}
			k++
		}
	}

	out := make([]Row, 0, len(rows)+len(duplicate))
	for i, r := range rows {
		out = append(out, r)
		if duplicate[i] {
			r.Fault = FaultDuplicate
			out = append(out, r)
		}
	}
	return out
}

// plant gives row r fault kind; k counts the rows of that kind so far and
// chooses among a kind's variants.
func plant(r *Row, kind Fault, k int) {
	r.Fault = kind
	switch kind {
	case FaultMissing:
		if k%2 == 0 {
			r.WeightCell, r.FaultIn = "", Weight
		} else {
			r.LengthCell, r.FaultIn = "", Length
		}
	case FaultNotNumber:
		v := notNumber[k%len(notNumber)]
		r.FaultIn = v.in
		if v.in == Weight {
			r.WeightCell = v.cell(r.WeightCell)
		} else {
			r.LengthCell = v.cell(r.LengthCell)
		}
	case FaultGrams:
		r.FaultIn = Weight
		r.WeightCell = strconv.Itoa(int(math.Round(r.WeightKg * 1000)))
	case FaultDatesSwapped:
		r.BirthDate, r.VisitDate = r.VisitDate, r.BirthDate
		r.AgeMonths = -r.AgeMonths
	case FaultLength:
		r.FaultIn = Length
		r.LengthCell = decimalLost(r.LengthCell)
	case FaultWeight:
		r.FaultIn = Weight
		if k < 3 {
			r.WeightCell = decimalLost(r.WeightCell)
		} else {
			r.WeightCell = strconv.FormatFloat(r.WeightKg/10, 'f', 2, 64)
		}
	default:
		panic("district: no way to plant fault " + string(kind))
	}
}
