// Package refchart turns one stratum of a reference into the input of
// render's centile chart: the chart centiles (and, on request, the curves at
// whole SD) evaluated on an age grid over the whole fitted range or a part
// of it, with the bootstrap bands. It is the one place that builds a
// stratum's chart; the command, the cohort comparison and the clinic page
// add their own points, trajectories or overlays to what it returns.
//
// The curve at z SD is the centile of level Φ(z): for z = −3, −2, +2, +3
// the centiles 0.135, 2.275, 97.725 and 99.865.
package refchart
