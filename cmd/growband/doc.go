// Command growband builds pediatric growth references from measurement data
// and uses them.
//
//	growband build PLAN.toml [--out DIR]   fit a reference; write reference.json,
//	                                       centiles.csv, excluded.csv, charts, report.html
//	growband demo [--out DIR]              the same on the invented Tarnwick District survey
//	growband table --ref FILE ...          centile or velocity tables
//	growband score --ref FILE ...          z-scores and centiles of measurements
//	growband chart --ref FILE ...          the centile chart, optionally with children's points
//	growband check --ref FILE --in DATA    coverage, Q-tests and worm plots against new data
//
// Each subcommand documents its flags on -h. Results go to standard output,
// messages and progress to standard error prefixed "growband: ". The exit
// status is 0 on success, 1 on failure (bad input files, fits that fail) and
// 2 on bad usage (unknown commands or flags, bad flag values).
//
// A build fits twice: a first pass scores every usable row, rows with |z|
// above the plan's plausible.z (default 5, common practice) are moved to the
// exclusions as implausible, and the curves are fitted again on the rest.
package main
