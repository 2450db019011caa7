// Package live is the page at the test bay: a small read-only web server
// that shows the engineer holding the hammer, from a few metres away,
// whether the last hit counts.
//
// The page shows the last recorded hit large: its verdict, told apart by
// a shape, a word and a colour; the reason that decided it in plain words
// with what to do about it; each mode's frequency and damping ratio with
// its 95 % interval beside the campaign's band for that mode (the median
// of the revision's earlier hits plus or minus 3 scaled median absolute
// deviations, the outlier rule of package report); and the plot of its
// decay and spectrum (report/page's per-hit SVG). Below it: the day's
// tally per prototype and revision, the last few hits with their
// verdicts, and links to the day's report and the revision comparison,
// both drawn by report/page from the history on request.
//
// Updates are pushed: the daemon calls Notify after each commit, one
// goroutine renders the page's main part once and a server-sent event
// carries it to every open page, which swaps it in without a reload.
// Nothing polls the database. A page whose scripts are off refreshes
// itself (a meta refresh inside noscript).
//
// For scripts: GET /api/last (the last hit, shaped like a line of
// 'ringlog history --json' plus its "id"), GET /api/hits?since=ID (the hits
// recorded after that one, oldest first, at most 500) and GET /api/status
// (what 'ringlog status --json' says). The JSON shapes come from the
// command (Options.HitJSON, Options.Status) and are encoded by report.JSON.
//
// Security: only GET and HEAD are served (anything else is 405); on a
// loopback address without a token the Host header must name a loopback
// host (no DNS rebinding); any other address needs a token, given as a
// bearer token or through a cookie that a one-time link sets (CheckListen
// refuses to start without one). Every response carries a
// Content-Security-Policy that forbids every external load (the page's
// one inline script and stylesheet are allowed by their SHA-256 hashes,
// never by 'unsafe-inline'), X-Content-Type-Options, X-Frame-Options,
// frame-ancestors and Referrer-Policy. Connections, event streams,
// request rates per client, header sizes and the time a request may take
// are bounded (Limits). Nothing is served but what the history holds and
// the files directly inside the report folder, opened through os.Root so
// that neither ".." nor a symbolic link leads out of it.
package live
