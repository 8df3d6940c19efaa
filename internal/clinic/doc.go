// Package clinic is growband's local web page and scoring API: a clinician
// picks a loaded reference, enters a child's measurements at one or more
// visits and sees each z-score, centile and remark beside the centile chart
// with the child's trajectory; a CSV file of many children can be scored in
// one upload. The same scoring is offered as a small JSON API under /api/v1/.
//
// Age is taken as given, in the reference's age unit, or computed from the
// birth and visit dates as the exact number of days between them divided by
// the length of the unit: 7 days a week, 30.4375 days a month (365.25/12) and
// 365.25 days a year (the Julian year, common practice in growth monitoring).
//
// The server keeps no children's data: nothing is written to disk and the log
// records no measurements, unless an audit log is asked for, which then
// receives one JSON line per scored measurement. It listens on the loopback
// address unless told otherwise, and every page and asset it serves is
// embedded in the program: nothing is fetched from elsewhere.
//
// Requests must name this server in their Host header (a loopback name, the
// listening address or Options.Hosts), which defeats DNS rebinding; a post
// that a browser marks as coming from a page of another origin (Origin,
// Referer or Sec-Fetch-Site) is refused, and the score API takes JSON only
// as application/json, without repeated keys. A request whose audit lines
// cannot be written fails. Answers are UTF-8 throughout, and the CSV files
// it writes pass every cell through csvsafe.Cell.
//
// Endpoints:
//
//	GET  /                      the page (also renders a GET query, for links)
//	POST /                      the page after submitting the form
//	POST /batch                 multipart CSV upload; answers the scored CSV
//	GET  /api/v1/references     the loaded references
//	POST /api/v1/score          one measurement (object) or several (array)
//	GET  /api/v1/chart.svg      the centile chart with age/value pairs
//	POST /api/v1/batch          a CSV body (?reference=NAME); answers the scored CSV
//	GET  /healthz               "ok"
package clinic
