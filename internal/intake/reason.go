package intake

import "fmt"

// Reason says why a data row is not used. Every excluded row carries exactly
// one; the zero Reason is not a valid exclusion reason.
type Reason int

// The exclusion reasons, in the order they are reported.
const (
	ReasonFields      Reason = iota + 1 // wrong number of fields
	ReasonQuotes                        // badly quoted field
	ReasonMissing                       // missing value
	ReasonNotNumber                     // not a number
	ReasonBadDate                       // unparsable date
	ReasonDateOrder                     // measured before birth
	ReasonAgeRange                      // age outside the plausible range
	ReasonValueRange                    // value outside the plausible range
	ReasonWeight                        // non-positive or non-finite weight
	ReasonStratum                       // unknown stratum code
	ReasonDuplicate                     // duplicate of an earlier row
	ReasonImplausible                   // implausible against a first-pass fit
	numReasons
)

var reasonText = [numReasons]string{
	ReasonFields:      "wrong number of fields",
	ReasonQuotes:      "badly quoted field",
	ReasonMissing:     "missing value",
	ReasonNotNumber:   "not a number",
	ReasonBadDate:     "unparsable date",
	ReasonDateOrder:   "date order impossible (measured before birth)",
	ReasonAgeRange:    "age outside the plausible range",
	ReasonValueRange:  "value outside the plausible range",
	ReasonWeight:      "non-positive or non-finite weight",
	ReasonStratum:     "unknown stratum code",
	ReasonDuplicate:   "duplicate of an earlier row",
	ReasonImplausible: "implausible against a first-pass fit",
}

// String returns the reason's human text, for example "missing value".
func (r Reason) String() string {
	if r.valid() {
		return reasonText[r]
	}
	return fmt.Sprintf("Reason(%d)", int(r))
}

func (r Reason) valid() bool { return r > 0 && r < numReasons }
