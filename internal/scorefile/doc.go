// Package scorefile scores a CSV file of measurements against a reference:
// how the file is read, why a row is not scored, and how the scored file is
// written. `growband score --in` and the clinic's batch upload both use it,
// so the same file gets the same answers and the same messages from either.
//
// Every row comes back in file order with three columns added: z, centile
// (percent) and flag. A row that cannot be scored has an empty z and centile
// and the reason in flag; a scored row's flag lists remarks such as
// beyond-tail or implausible.
package scorefile
