package curve_test

import (
	"fmt"
	"strings"

	"growband/curve"
)

// A published LMS table (here the WHO 2006 weight-for-age triple for boys at
// birth, from memory, and an invented second row) scores like a fitted
// reference.
func ExampleLoadLMSTable() {
	table := `# age_unit = days
# measure = weight
# unit = kg
age,L,M,S
0,0.3487,3.3464,0.14602
1,0.3127,3.3174,0.14600
`
	ref, err := curve.LoadLMSTable(strings.NewReader(table), "lms-birth.csv", &curve.LMSTableOptions{Tails: curve.TailsRestricted})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, y := range []float64{3.0, 5.5} {
		s, _ := ref.Score("", 0, y)
		fmt.Println(strings.TrimSpace(fmt.Sprintf("%.1f kg: z %.3f, centile %.1f %s", y, s.Z, s.Centile, s.Flags)))
	}
	// Output:
	// 3.0 kg: z -0.734, centile 23.1
	// 5.5 kg: z 3.768, centile 100.0 beyond-tail
}
