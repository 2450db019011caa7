package live

import (
	"crypto/sha256"
	"encoding/base64"
	"html/template"
	"strconv"
)

// The page's one stylesheet and one script, inline and allowed by their
// SHA-256 hashes in the Content-Security-Policy.
const css = `
:root{--ink:#111;--paper:#fff;--muted:#4a4a4a;--rule:#bbb;--acc:#176b2c;--flag:#8f5b00;--rej:#b0201a}
*{box-sizing:border-box}
html{font-size:20px}
body{margin:0;background:var(--paper);color:var(--ink);font-family:system-ui,"Segoe UI","Noto Sans","Liberation Sans",Arial,sans-serif;line-height:1.35}
main{max-width:1500px;margin:0 auto;padding:14px 22px 30px}
.conn{display:none;background:var(--ink);color:var(--paper);padding:6px 22px;font-weight:700}
body.stale .conn{display:block}
.top{display:flex;justify-content:space-between;align-items:baseline;gap:16px;border-bottom:4px solid var(--ink);padding-bottom:6px}
.top h1{font-size:1.2rem;margin:0;letter-spacing:.04em;text-transform:uppercase}
.top .clock{font-variant-numeric:tabular-nums;color:var(--muted)}
.verdict{display:grid;grid-template-columns:auto 1fr;gap:6px 28px;align-items:center;margin:16px 0;padding:18px 22px;border:8px solid var(--ink)}
.verdict.accepted{border-color:var(--acc)}.verdict.flagged{border-color:var(--flag);border-style:dashed}.verdict.rejected{border-color:var(--rej);border-width:12px}
.verdict svg.shape{width:9rem;height:9rem;grid-row:span 3}
.verdict .word{font-size:5.2rem;font-weight:800;line-height:1;letter-spacing:.02em}
.accepted .word{color:var(--acc)}.flagged .word{color:var(--flag)}.rejected .word{color:var(--rej)}
.verdict .counts{font-size:2.1rem;font-weight:700}
.verdict .file{font-size:1rem;color:var(--muted);overflow-wrap:anywhere}
.why{font-size:1.7rem;margin:8px 0 4px;font-weight:600}
.do{font-size:1.7rem;margin:4px 0 10px;padding-left:14px;border-left:10px solid var(--ink)}
.do b{text-transform:uppercase;font-size:1.1rem;letter-spacing:.05em;margin-right:.4em}
.msg,.small{color:var(--muted);font-size:.95rem}
.cols{display:grid;grid-template-columns:minmax(0,1.15fr) minmax(0,1fr);gap:24px;align-items:start}
@media (max-width:1000px){.cols{grid-template-columns:1fr}.verdict .word{font-size:3.6rem}.verdict svg.shape{width:6rem;height:6rem}}
h2{font-size:1.15rem;text-transform:uppercase;letter-spacing:.05em;margin:18px 0 6px;border-bottom:2px solid var(--ink)}
table{border-collapse:collapse;width:100%;font-variant-numeric:tabular-nums}
th,td{text-align:left;padding:6px 8px;border-bottom:1px solid var(--rule);vertical-align:top}
th{font-size:.8rem;text-transform:uppercase;letter-spacing:.04em;color:var(--muted)}
td.n,th.n{text-align:right}
.modes td{font-size:1.35rem}
.modes td.lab{font-weight:700;white-space:nowrap}
.modes .ci{display:block;font-size:.85rem;color:var(--muted)}
.bandt{display:block;font-size:.85rem;color:var(--muted)}
.judge{font-weight:700;font-size:.95rem}
.judge.out{color:var(--rej)}
.judge.out::before{content:"\25B2 "}
.judge.in::before{content:"\25CF "}
svg.band{width:100%;height:1.1rem;display:block}
.dropped td{color:var(--muted);text-decoration:line-through}
img.plot{width:100%;height:auto;border:1px solid var(--rule);background:#fff}
.tag{display:inline-block;white-space:nowrap;min-width:7.2em;padding:2px 8px;font-weight:700;font-size:.9rem;border:3px solid var(--ink)}
.tag.accepted{border-color:var(--acc);color:var(--acc)}
.tag.flagged{border-color:var(--flag);color:var(--flag);border-style:dashed}
.tag.rejected{background:var(--rej);border-color:var(--rej);color:#fff}
.tag.accepted::before{content:"\2714  "}.tag.flagged::before{content:"!  "}.tag.rejected::before{content:"\2716  "}
.fail{border:6px solid var(--rej);padding:10px 16px;font-size:1.3rem;margin:14px 0}
.links a{display:inline-block;margin:6px 18px 6px 0;font-size:1.15rem;color:var(--ink);font-weight:700}
.empty{font-size:2rem;margin:40px 0}
`

const js = `(function(){
var m=document.getElementById("live");
function title(){var v=m.querySelector("[data-title]");if(v){document.title=v.getAttribute("data-title");}}
title();
if(!("EventSource" in window)){setTimeout(function(){location.reload();},3000);return;}
var es=new EventSource("events");
es.addEventListener("hit",function(e){m.innerHTML=e.data;title();document.body.classList.remove("stale");});
es.onopen=function(){document.body.classList.remove("stale");};
es.onerror=function(){document.body.classList.add("stale");};
})();`

// hashOf is the CSP source expression of an inline element's content.
func hashOf(s string) string {
	sum := sha256.Sum256([]byte(s))
	return "'sha256-" + base64.StdEncoding.EncodeToString(sum[:]) + "'"
}

var (
	cssHash = hashOf(css)
	jsHash  = hashOf(js)
)

// pageCSP is the policy of the live page: nothing from anywhere else;
// the inline script and stylesheet by hash; images, the event stream and
// the API from this server only.
var pageCSP = "default-src 'none'; script-src " + jsHash + "; style-src " + cssHash +
	"; img-src 'self'; connect-src 'self'; base-uri 'none'; form-action 'none'; frame-ancestors 'none'"

// reportCSP is the policy of the reports and plots drawn by report/page:
// they carry no script, and their SVG plots style their elements with
// style attributes, which a hash cannot allow; still nothing external.
const reportCSP = "default-src 'none'; script-src 'none'; style-src 'unsafe-inline'; img-src data:; base-uri 'none'; form-action 'none'; frame-ancestors 'none'"

// refreshSeconds is how often a page without scripts reloads itself.
const refreshSeconds = 3

// pageHead and pageTail wrap the main part: written as plain strings so
// that the inline style and script are byte for byte what their hashes
// allow.
var pageHead = `<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<meta name="viewport" content="width=device-width,initial-scale=1">
<meta name="referrer" content="no-referrer">
<title>ringlog live</title>
<link rel="icon" href="favicon.svg" type="image/svg+xml">
<noscript><meta http-equiv="refresh" content="` + strconv.Itoa(refreshSeconds) + `"></noscript>
<style>` + css + `</style>
</head><body>
<div class="conn" role="status">Connection to ringlog lost: retrying. The page may be out of date.</div>
<main id="live">`

const pageTail = `</main>
<script>` + js + `</script>
</body></html>
`

var mainTmpl = template.Must(template.New("main").Parse(`<div data-title="{{if .Last}}{{.Last.Headline}} · {{.Last.File}}{{else}}ringlog live{{end}}">
<div class="top"><h1>ringlog · last hit</h1><span class="clock">updated {{.Now}}</span></div>
{{with .Failed}}<div class="fail"><b>The last file could not be analysed</b> ({{.Time}}): {{.File}}. <span class="small">{{.Message}}</span> Export it again or strike again.</div>{{end}}
{{with .Last}}
<section class="verdict {{.Verdict}}" aria-label="verdict of the last hit">
{{if eq .Verdict "accepted"}}<svg class="shape" viewBox="0 0 100 100" aria-hidden="true"><circle cx="50" cy="50" r="46" fill="#176b2c"/><path d="M27 52 L44 69 L75 33" fill="none" stroke="#fff" stroke-width="11" stroke-linecap="round" stroke-linejoin="round"/></svg>
{{else if eq .Verdict "flagged"}}<svg class="shape" viewBox="0 0 100 100" aria-hidden="true"><polygon points="50,5 96,92 4,92" fill="#8f5b00"/><rect x="44" y="32" width="12" height="34" fill="#fff"/><rect x="44" y="72" width="12" height="12" fill="#fff"/></svg>
{{else}}<svg class="shape" viewBox="0 0 100 100" aria-hidden="true"><polygon points="30,3 70,3 97,30 97,70 70,97 30,97 3,70 3,30" fill="#b0201a"/><path d="M31 31 L69 69 M69 31 L31 69" stroke="#fff" stroke-width="12" stroke-linecap="round"/></svg>{{end}}
<div class="word">{{.Headline}}</div>
<div class="counts">{{.Counts}}</div>
<div class="file">{{.File}} · {{.Where}} · struck {{.Time}} · hit {{.ID}}</div>
</section>
<p class="why">{{.Decided}}</p>
{{if .Do}}<p class="do"><b>What to do</b>{{.Do}}</p>{{end}}
{{if .Message}}<p class="msg">{{.Code}}: {{.Message}}</p>{{end}}
{{range .Others}}<p class="msg">Also {{.Code}} ({{.Severity}}): {{.Message}}</p>{{end}}
<div class="cols">
<div>
<h2>Modes of this hit</h2>
{{if .NoModes}}<p class="why">No mode was found in this hit.</p>{{else}}
<table class="modes"><thead><tr><th>mode</th><th>frequency [Hz]</th><th>damping ratio [%]</th></tr></thead><tbody>
{{range .Modes}}<tr{{if .Dropped}} class="dropped"{{end}}><td class="lab">{{.Label}}{{if .Dropped}} (dropped){{end}}</td>
<td>{{.Freq}}<span class="ci">95 %: {{.FreqCI}}</span>{{with .FreqBand}}{{template "band" .}}{{end}}</td>
<td>{{.Damp}}<span class="ci">95 %: {{.DampCI}}</span>{{with .DampBand}}{{template "band" .}}{{end}}</td></tr>
{{end}}</tbody></table>
<p class="small">Band: revision {{.BandRevision}}'s earlier hits, median ± 3 scaled median absolute deviations. {{.BandInsufficientMsg}}</p>{{end}}
</div>
<div><h2>Decay and spectrum</h2><img class="plot" src="{{.PlotURL}}" alt="{{.PlotAlt}}" width="510" height="595"></div>
</div>
{{else}}<p class="empty">No hit recorded yet. Strike: the verdict appears here.</p>{{end}}
<div class="cols">
<div><h2>Today</h2>
{{if .Tally}}<table><thead><tr><th>prototype</th><th>revision</th><th class="n">accepted</th><th class="n">flagged</th><th class="n">rejected</th><th class="n">all</th></tr></thead><tbody>
{{range .Tally}}<tr><td>{{.Prototype}}</td><td>{{.Revision}}</td><td class="n">{{.Accepted}}</td><td class="n">{{.Flagged}}</td><td class="n">{{.Rejected}}</td><td class="n">{{.Total}}</td></tr>{{end}}
{{if gt (len .Tally) 1}}{{with .TallyTotal}}<tr><th colspan="2">all</th><td class="n">{{.Accepted}}</td><td class="n">{{.Flagged}}</td><td class="n">{{.Rejected}}</td><td class="n">{{.Total}}</td></tr>{{end}}{{end}}
</tbody></table>{{else}}<p>No hit recorded today yet.</p>{{end}}
<p class="links"><a href="{{.DailyLink}}">Today's report</a>{{if .CompareLink}}<a href="{{.CompareLink}}">{{.CompareText}}</a>{{end}}</p>
</div>
<div><h2>Last hits</h2>
{{if .Recent}}<table><tbody>{{range .Recent}}<tr><td>{{.Time}}</td><td><span class="tag {{.Verdict}}">{{.Word}}</span></td><td>{{.File}}<span class="bandt">{{.Reason}}</span></td></tr>{{end}}</tbody></table>{{else}}<p>None yet.</p>{{end}}
</div>
</div>
</div>
{{define "band"}}<span class="bandt">campaign {{.Text}} · <span class="judge {{if .Inside}}in{{else}}out{{end}}">{{.Judgement}}</span></span><svg class="band" viewBox="0 0 100 10" preserveAspectRatio="none" aria-hidden="true"><rect x="0" y="4" width="100" height="2" fill="#ddd"/><rect x="{{.Lo}}" y="1" width="{{.W}}" height="8" fill="#9ab"/>{{if ge .CILo 0.0}}<rect x="{{.CILo}}" y="4" width="{{.CIW}}" height="2" fill="#111"/>{{end}}{{if ge .X 0.0}}<rect x="{{.X}}" y="0" width="0.8" height="10" fill="#111"/>{{end}}</svg>{{end}}`))

// favicon is the page's icon: a decaying ring, drawn by us.
const favicon = `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 32 32"><rect width="32" height="32" rx="5" fill="#111"/><path d="M3 16 Q6 3 9 16 T15 16 T21 16 T27 16" fill="none" stroke="#fff" stroke-width="3" stroke-linecap="round"/></svg>`
