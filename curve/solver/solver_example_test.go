package solver_test

import (
	"encoding/csv"
	"fmt"
	"log"
	"os"
	"strconv"

	"growband/curve/solver"
)

// ExampleSolve fits the median Engel curve: food expenditure on income for
// 235 Belgian households of 1857. The coefficients agree with Koenker &
// Hallock (2001), J. Economic Perspectives 15(4), 143-156, and with the exact
// LP optimum by HiGHS in SciPy 1.10.1 (81.48225, 0.56018).
func ExampleSolve() {
	f, err := os.Open("../../testdata/engel.csv")
	if err != nil {
		log.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		log.Fatal(err)
	}
	var y []float64
	var rows [][]float64
	for _, rec := range recs[1:] { // header: "income","foodexp"
		income, err1 := strconv.ParseFloat(rec[0], 64)
		food, err2 := strconv.ParseFloat(rec[1], 64)
		if err1 != nil || err2 != nil {
			log.Fatal("bad number in engel.csv")
		}
		rows = append(rows, []float64{1, income})
		y = append(y, food)
	}
	sol, err := solver.Solve(&solver.Problem{Y: y, X: solver.NewDense(rows), Tau: 0.5}, nil)
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("intercept %.4f\nslope %.4f\n", sol.Coef[0], sol.Coef[1])
	// Output:
	// intercept 81.4822
	// slope 0.5602
}
