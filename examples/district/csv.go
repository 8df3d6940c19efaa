package district

import (
	"bytes"
	"encoding/csv"
	"strconv"
)

// header is the CSV header, in column order.
var header = []string{
	"child_id", "clinic", "area", "sex", "birth_date", "visit_date",
	"age_months", "weight_kg", "length_cm", "survey_weight",
}

// dateLayout writes dates as YYYY-MM-DD.
const dateLayout = "2006-01-02"

// CSV returns the survey as comma-separated text with a header line,
// columns
//
//	child_id, clinic, area, sex, birth_date, visit_date,
//	age_months, weight_kg, length_cm, survey_weight
//
// in the format of encoding/csv (lines end in "\n"; a cell holding a comma,
// such as "12,4", is quoted). Every call returns the same bytes.
func CSV() []byte {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	rec := make([]string, len(header))
	// Writes go to a bytes.Buffer and cannot fail.
	_ = w.Write(header)
	for _, r := range Generate() {
		rec[0] = r.ChildID
		rec[1] = r.Clinic
		rec[2] = r.Area
		rec[3] = r.SexCode
		rec[4] = r.BirthDate.Format(dateLayout)
		rec[5] = r.VisitDate.Format(dateLayout)
		rec[6] = strconv.FormatFloat(r.AgeMonths, 'f', 2, 64)
		rec[7] = r.WeightCell
		rec[8] = r.LengthCell
		rec[9] = strconv.FormatFloat(r.SurveyWeight, 'f', 2, 64)
		_ = w.Write(rec)
	}
	w.Flush()
	return buf.Bytes()
}
