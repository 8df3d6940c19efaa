// Package cohort compares a cohort of measurements with a growth reference:
// the distribution of the cohort's z-scores per stratum and age band against
// the standard normal the reference implies, the difference between two
// cohorts, and the difference between two references in z units. Run
// carries out a whole comparison (tables and charts) from Go values; the
// command's flags live in cmd/growband.
//
// For a group of n rows with z-scores z_i, weights w_i (1 without survey
// weights) and subjects g (each row its own subject without ids), the mean
// and the share below a cut are ratio estimates
//
//	m = sum_i w_i y_i / sum_i w_i,   y_i = z_i or 1{z_i < cut},
//
// with the cluster-robust (sandwich, linearization) variance over the G
// subjects
//
//	V = G/(G-1) sum_g (sum_{i in g} w_i (y_i - m))^2 / (sum_i w_i)^2,
//
// which is s^2/n for unweighted rows without ids. Mean intervals are
// m ± t_{G-1} sqrt(V). Share intervals are Wilson score intervals at the
// effective size n/deff, deff = V / (p(1-p)/n) the Kish design effect (1
// without weights and ids).
package cohort
