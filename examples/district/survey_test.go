package district

import (
	"bytes"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"math"
	"reflect"
	"strconv"
	"testing"
)

// csvSHA256 pins the survey bytes. It is a regression value of our own,
// recorded from this code on linux/amd64 with Go 1.26: it does not say the
// data are right, only that they have not changed. Update it, and say so,
// when the survey is changed on purpose.
const csvSHA256 = "0e92ed7fd3c65f5bcf45b4a4a75f2fc091da8bbe24fbf77e40773ad5b6f8efec"

func TestDeterministic(t *testing.T) {
	a, b := CSV(), CSV()
	if !bytes.Equal(a, b) {
		t.Fatal("two calls of CSV differ")
	}
	if !reflect.DeepEqual(Generate(), Generate()) {
		t.Fatal("two calls of Generate differ")
	}
	sum := sha256.Sum256(a)
	if got := hex.EncodeToString(sum[:]); got != csvSHA256 {
		t.Errorf("SHA-256 of CSV() = %s, pinned %s (regression pin; update only for a deliberate change)", got, csvSHA256)
	}
}

// binomialTol is the tolerance on an observed share: 4 binomial standard
// errors sqrt(p(1-p)/n) of the expected share p (common practice; about 1
// in 16,000 for a single normal check).
func binomialTol(p float64, n int) float64 {
	return 4 * math.Sqrt(p*(1-p)/float64(n))
}

func TestDesign(t *testing.T) {
	rows := Generate()
	visits := map[string]int{}
	var order []string
	for _, r := range rows {
		if r.Fault == FaultDuplicate {
			continue
		}
		if visits[r.ChildID] == 0 {
			order = append(order, r.ChildID)
		}
		visits[r.ChildID]++
		if r.Visit != visits[r.ChildID] {
			t.Fatalf("%s: visit %d listed as number %d", r.ChildID, r.Visit, visits[r.ChildID])
		}
	}
	if len(order) != children || order[0] != "TW00001" || order[children-1] != "TW06000" {
		t.Fatalf("%d children from %s to %s, want %d from TW00001 to TW06000", len(order), order[0], order[len(order)-1], children)
	}
	repeat := 0
	for _, n := range visits {
		if n < 1 || n > 4 {
			t.Errorf("a child has %d visits, want 1 to 4", n)
		}
		if n > 1 {
			repeat++
		}
	}
	// Expected share 3/10 (repeatPer10); binomial over the children.
	if share := float64(repeat) / children; math.Abs(share-0.3) > binomialTol(0.3, children) {
		t.Errorf("share of children with repeat visits %.4f, want 0.3", share)
	}

	codings := map[string]int{}
	for i, r := range rows {
		days := r.VisitDate.Sub(r.BirthDate).Hours() / 24
		// age_months is defined as days / (365.25/12) to two decimals
		// (exact identity of the documented definition).
		if want := math.Round(days/(365.25/12)*100) / 100; r.AgeMonths != want {
			t.Errorf("row %d: age %v months, dates give %v", i, r.AgeMonths, want)
		}
		switch {
		case r.Fault == FaultDatesSwapped:
			if !(r.AgeMonths <= -1 && r.AgeMonths >= -MaxAgeMonths) {
				t.Errorf("row %d: swapped dates give age %v", i, r.AgeMonths)
			}
		case r.AgeMonths < 0 || r.AgeMonths > MaxAgeMonths:
			t.Errorf("row %d: age %v outside [0, 60]", i, r.AgeMonths)
		}
		if i > 0 && rows[i-1].ChildID == r.ChildID && r.Fault != FaultDuplicate &&
			r.Fault != FaultDatesSwapped && rows[i-1].Fault != FaultDatesSwapped {
			gap := r.VisitDate.Sub(rows[i-1].VisitDate).Hours() / 24
			if gap < minGapDays || gap > maxGapDays {
				t.Errorf("row %d: %v days after the previous visit", i, gap)
			}
		}
		wantCode, wantWeight := r.Sex, 1.25 // town weight, see doc.go
		if r.Clinic == "Highmoor Mobile Team" {
			wantCode = map[string]string{"M": "1", "F": "2"}[r.Sex]
		}
		if r.Area == "hills" {
			wantWeight = 3.40
		}
		if r.SexCode != wantCode || r.SurveyWeight != wantWeight {
			t.Errorf("row %d (%s, %s): sex code %q weight %v, want %q %v", i, r.Clinic, r.Area, r.SexCode, r.SurveyWeight, wantCode, wantWeight)
		}
		codings[r.SexCode]++
	}
	if len(codings) != 4 {
		t.Errorf("sex codes %v, want F, M, 1 and 2", codings)
	}
}

func TestFaults(t *testing.T) {
	rows := Generate()
	want := map[Fault]int{}
	total := 0
	for _, pf := range plantedFaults {
		want[pf.kind] = pf.rows
		total += pf.rows
	}
	// The documented counts (doc.go); they add up to 131.
	if total != 131 || want[FaultMissing] != 84 || want[FaultNotNumber] != 30 || want[FaultWeight] != 5 {
		t.Fatalf("planted faults %v no longer match doc.go", want)
	}
	got := map[Fault]int{}
	for i, r := range rows {
		got[r.Fault]++
		parsedW, errW := strconv.ParseFloat(r.WeightCell, 64)
		parsedL, errL := strconv.ParseFloat(r.LengthCell, 64)
		ok := true
		switch r.Fault {
		case NoFault, FaultDatesSwapped:
			ok = errW == nil && errL == nil && parsedW == r.WeightKg && parsedL == r.LengthCm
		case FaultDuplicate:
			ok = i > 0 && reflect.DeepEqual(withFault(r, NoFault), rows[i-1])
		case FaultMissing:
			ok = (r.FaultIn == Weight && r.WeightCell == "") || (r.FaultIn == Length && r.LengthCell == "")
		case FaultNotNumber:
			ok = (r.FaultIn == Weight && errW != nil) || (r.FaultIn == Length && errL != nil)
		case FaultGrams:
			ok = r.FaultIn == Weight && errW == nil && math.Abs(parsedW-1000*r.WeightKg) < 1e-6
		case FaultLength:
			// Decimal point lost: ten times the true length, so at least
			// 450 cm (exact identity of the planted error).
			ok = r.FaultIn == Length && errL == nil && math.Abs(parsedL-10*r.LengthCm) < 1e-6
		case FaultWeight:
			ratio := parsedW / r.WeightKg
			ok = r.FaultIn == Weight && errW == nil &&
				(math.Abs(ratio-10) < 1e-6 || math.Abs(parsedW-r.WeightKg/10) <= 0.005+1e-9)
		default:
			ok = false
		}
		if !ok {
			t.Errorf("row %d: fault %q does not show as documented: %+v", i, r.Fault, r)
		}
		if (r.Fault == NoFault) != (r.Clean(Weight) && r.Clean(Length)) {
			t.Errorf("row %d: fault %q but Clean says %v, %v", i, r.Fault, r.Clean(Weight), r.Clean(Length))
		}
	}
	delete(got, NoFault)
	if !reflect.DeepEqual(got, want) {
		t.Errorf("faults %v, want %v", got, want)
	}
	// The brief asks for about 1-2% faulty rows in total.
	if share := float64(total) / float64(len(rows)); share < 0.01 || share > 0.02 {
		t.Errorf("faulty share %.4f, want 1-2%%", share)
	}
	// Each measure cell carries a mix of both missing and not-a-number.
	for _, m := range measures {
		n := 0
		for _, r := range rows {
			if r.FaultIn == m && (r.Fault == FaultMissing || r.Fault == FaultNotNumber) {
				n++
			}
		}
		if n < 40 {
			t.Errorf("%s: only %d missing or non-numeric cells", m, n)
		}
	}
}

func withFault(r Row, f Fault) Row {
	r.Fault = f
	return r
}

// TestCSVMatchesRows reads CSV() back with encoding/csv and compares every
// cell with Generate().
func TestCSVMatchesRows(t *testing.T) {
	recs, err := csv.NewReader(bytes.NewReader(CSV())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	rows := Generate()
	if len(recs) != len(rows)+1 || !reflect.DeepEqual(recs[0], header) {
		t.Fatalf("%d records, header %v", len(recs), recs[0])
	}
	for i, r := range rows {
		want := []string{r.ChildID, r.Clinic, r.Area, r.SexCode,
			r.BirthDate.Format("2006-01-02"), r.VisitDate.Format("2006-01-02"),
			strconv.FormatFloat(r.AgeMonths, 'f', 2, 64), r.WeightCell, r.LengthCell,
			strconv.FormatFloat(r.SurveyWeight, 'f', 2, 64)}
		if !reflect.DeepEqual(recs[i+1], want) {
			t.Fatalf("line %d: %q, want %q", i+2, recs[i+1], want)
		}
	}
}

// TestCleanRowsFollowTruth checks that, among clean rows, the share below
// TrueQuantile(tau) is tau. Rows of one child are correlated, so each check
// takes one row per child, either every child's first visit or the last
// visit of each child seen more than once; then the count is binomial and
// the tolerance is 4 binomial standard errors (binomialTol).
func TestCleanRowsFollowTruth(t *testing.T) {
	rows := Generate()
	last := map[string]int{}
	for i, r := range rows {
		if r.Visit > 1 && r.Fault != FaultDuplicate {
			last[r.ChildID] = i
		}
	}
	sets := map[string]func(i int, r Row) bool{
		"first visits":       func(_ int, r Row) bool { return r.Visit == 1 },
		"last repeat visits": func(i int, r Row) bool { return r.Visit > 1 && last[r.ChildID] == i },
	}
	for name, in := range sets {
		for _, m := range measures {
			for _, sex := range sexes {
				for _, tau := range []float64{0.03, 0.5, 0.97} {
					n, below := 0, 0
					for i, r := range rows {
						if r.Sex != sex || !r.Clean(m) || !in(i, r) {
							continue
						}
						n++
						if r.Value(m) < TrueQuantile(m, sex, r.AgeMonths, tau) {
							below++
						}
					}
					if n < 800 {
						t.Fatalf("%s %s %s: only %d rows", name, m, sex, n)
					}
					share := float64(below) / float64(n)
					if math.Abs(share-tau) > binomialTol(tau, n) {
						t.Errorf("%s, %s, %s: share below the true %v-quantile %.4f (n = %d), want %v ± %.4f",
							name, m, sex, tau, share, n, tau, binomialTol(tau, n))
					}
				}
			}
		}
	}
}

var benchRows []Row
var benchBytes []byte

func BenchmarkGenerate6e3(b *testing.B) {
	for b.Loop() {
		benchRows = Generate()
	}
}

func BenchmarkCSV6e3(b *testing.B) {
	for b.Loop() {
		benchBytes = CSV()
	}
}
