package page

import (
	"fmt"
	"html/template"
	"strings"
)

// css is the one stylesheet of every page: system fonts only (nothing is
// fetched), a print layout for A4 and Letter alike (margins that fit both;
// the browser's paper setting decides the size), and figures, cards and
// tables kept whole across page breaks.
var css = func() string {
	var revs strings.Builder
	for i, c := range revColors {
		fmt.Fprintf(&revs, ".rev%d{--c:%s}\n", i, cssColor(c))
	}
	return `
:root{--ink:#26323c;--muted:#5b6873;--rule:#d6dbe0;--band:#f2f4f6;--acc:#3f7d4e;--flag:#b7791f;--rej:#a23b3b;--c:#26323c}
*{box-sizing:border-box}
html{-webkit-text-size-adjust:100%}
html{font-size:15px}
body{margin:0;color:var(--ink);background:#fff;font-size:1rem;line-height:1.45;font-family:system-ui,-apple-system,"Segoe UI","Noto Sans","Liberation Sans",Arial,sans-serif}
.wrap{max-width:1120px;margin:0 auto;padding:0 24px 40px}
header.mast{border-bottom:3px solid var(--ink);padding:22px 0 12px;margin-bottom:18px}
.kicker{text-transform:uppercase;letter-spacing:.08em;font-size:0.8rem;color:var(--muted)}
h1{font-size:1.867rem;line-height:1.2;margin:4px 0;font-weight:650}
.meta{color:var(--muted);font-size:0.867rem}
h2{font-size:1.267rem;margin:36px 0 10px;padding-bottom:4px;border-bottom:1px solid var(--rule)}
h3{font-size:1.067rem;margin:24px 0 6px}
p{margin:6px 0 10px}
.lede{color:var(--muted);margin-top:0}
code,.file{font-family:ui-monospace,"SFMono-Regular",Menlo,Consolas,"Liberation Mono",monospace;font-size:.9em;overflow-wrap:anywhere}
.glance{background:var(--band);border-left:6px solid var(--ink);padding:16px 20px;display:grid;grid-template-columns:minmax(280px,1fr) minmax(280px,1.15fr);gap:16px 34px}
.glance h2{margin:0 0 8px;border:0;padding:0;font-size:1rem;text-transform:uppercase;letter-spacing:.06em;color:var(--muted)}
.tiles{display:flex;gap:8px}
.tile{flex:1;background:#fff;border:1px solid var(--rule);border-top:4px solid var(--ink);padding:7px 10px}
.tile .n{display:block;font-size:2rem;font-weight:700;line-height:1.1;font-variant-numeric:tabular-nums}
.tile .l{font-size:0.767rem;color:var(--muted);text-transform:uppercase;letter-spacing:.05em}
.tile.accepted{border-top-color:var(--acc)}.tile.flagged{border-top-color:var(--flag)}.tile.rejected{border-top-color:var(--rej)}
.bar{display:flex;height:12px;margin-top:10px;background:var(--rule)}
.bar span{display:block}
.bar .accepted,.badge.accepted{background:var(--acc)}.bar .flagged,.badge.flagged{background:var(--flag)}.bar .rejected,.badge.rejected{background:var(--rej)}
.top{margin:0;padding-left:20px}.top li{margin:3px 0}
.top .count{font-weight:700;font-variant-numeric:tabular-nums}
.small{font-size:0.867rem;color:var(--muted)}
.warn{border-left:4px solid var(--rej);padding:4px 10px;background:#fff;font-size:0.9rem;margin-top:10px}
table{border-collapse:collapse;width:100%;font-size:0.9rem;font-variant-numeric:tabular-nums;margin:4px 0 8px}
th,td{text-align:left;padding:5px 8px;border-bottom:1px solid var(--rule);vertical-align:top}
th{font-weight:600;color:var(--muted);font-size:0.833rem;border-bottom:2px solid var(--ink)}
td code{white-space:nowrap}
td.n,th.n{text-align:right;white-space:nowrap}
td.ci,.ci{white-space:nowrap;color:var(--muted)}
.ci{font-size:.9em;font-weight:400}
td.name{white-space:nowrap}
.badge{display:inline-block;padding:0 7px;border-radius:9px;font-size:0.767rem;font-weight:600;color:#fff;white-space:nowrap}
.sev{font-size:0.767rem;text-transform:uppercase;letter-spacing:.04em;color:var(--muted)}
.swatch{display:inline-block;width:11px;height:11px;border-radius:2px;vertical-align:-1px;margin-right:5px;background:var(--c)}
` + revs.String() + `
.legend{display:flex;flex-wrap:wrap;gap:4px 18px;font-size:0.867rem;margin:4px 0 8px}
.legend .ring{display:inline-block;width:11px;height:11px;border-radius:50%;border:2px solid var(--ink);vertical-align:-1px;margin-right:5px}
.legend .dot{display:inline-block;width:6px;height:6px;background:var(--muted);vertical-align:1px;margin-right:5px}
.legend .bandkey{display:inline-block;width:18px;height:9px;background:rgba(38,50,60,.18);border-top:2px solid var(--ink);vertical-align:0;margin-right:5px}
.mode{break-inside:avoid;page-break-inside:avoid;margin-bottom:8px}
.figs{display:flex;flex-wrap:wrap;gap:10px 16px}
.figs figure{flex:1 1 400px;min-width:0}
figure{margin:0;break-inside:avoid;page-break-inside:avoid}
figcaption{font-size:0.833rem;color:var(--muted);margin-top:2px}
svg.plot{display:block;width:100%;height:auto;max-width:100%}
.pos-high,.pos-low{font-weight:600;color:var(--rej)}
.pos-within{color:var(--acc)}
.cards{display:grid;grid-template-columns:repeat(auto-fill,minmax(340px,1fr));gap:14px;align-items:start}
.card{border:1px solid var(--rule);border-left:5px solid var(--flag);padding:9px 12px 10px;break-inside:avoid;page-break-inside:avoid;background:#fff;min-width:0}
.card.rejected{border-left-color:var(--rej)}
.card h3{margin:0 0 2px;font-size:0.967rem;overflow-wrap:anywhere}
.card ul{margin:4px 0;padding-left:18px;font-size:0.867rem}
.card .modes{font-size:0.833rem;color:var(--muted);margin:2px 0 4px}
.card figure{margin:6px 0 2px}
.noplot{background:var(--band);color:var(--muted);padding:16px 10px;font-size:0.867rem;text-align:center;border:1px dashed var(--rule);overflow-wrap:anywhere}
.note{font-size:0.833rem;color:var(--muted);margin:4px 0 0}
.sentence{font-size:1.033rem;margin:4px 0 8px}
.verdict{display:inline-block;font-size:0.767rem;font-weight:600;text-transform:uppercase;letter-spacing:.05em;padding:1px 8px;border:1.5px solid var(--ink);margin-right:6px}
.verdict.differs{background:var(--ink);color:#fff}
.cautions{border:2px solid var(--ink);padding:8px 18px 8px 34px;margin:8px 0}
.cautions li{margin:6px 0}
.rayleigh{display:grid;grid-template-columns:minmax(340px,1.1fr) minmax(300px,1fr);gap:10px 24px;align-items:start;break-inside:avoid;page-break-inside:avoid}
dl.coef{display:grid;grid-template-columns:auto 1fr;gap:3px 14px;margin:0;font-variant-numeric:tabular-nums}
dl.coef dt{color:var(--muted);font-size:0.867rem}
dl.coef dd{margin:0}
footer{margin-top:40px;color:var(--muted);font-size:0.8rem;border-top:1px solid var(--rule);padding-top:8px}
a{color:inherit}
@media (max-width:760px){.glance,.rayleigh{grid-template-columns:1fr}.tiles{flex-wrap:wrap}}
@page{margin:14mm 12mm 15mm}
@media print{
html{font-size:9.5pt}
th,td{padding:3px 5px}
.wrap{max-width:none;padding:0}
header.mast{padding-top:0}
h2{break-after:avoid;page-break-after:avoid;margin-top:20px}
h3{break-after:avoid;page-break-after:avoid}
table,tr,figure,.card,.glance,.cautions,.mode,.rayleigh{break-inside:avoid;page-break-inside:avoid}
.glance,.tile,.bar span,.badge,.swatch,.verdict,.legend span{-webkit-print-color-adjust:exact;print-color-adjust:exact}
.figs figure{flex-basis:300px}
.cards{grid-template-columns:1fr 1fr}
a{text-decoration:none}
}
`
}()

var funcs = template.FuncMap{
	"plural": plural,
	"inc":    func(i int) int { return i + 1 },
	"fmtpct": func(x float64) string { return fmt.Sprintf("%.1f", x) },
}

const head = `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
{{with .Generator}}<meta name="generator" content="{{.}}">{{end}}
<title>{{.Title}}</title>
<style>` + "{{template \"css\"}}" + `</style>
</head>
<body>
<div class="wrap">
`

const foot = `<footer>
Written {{.Generated}}{{with .Generator}} by {{.}}{{end}}{{with .Database}} from the history <code>{{.}}</code>{{end}}.
This page is a single file: no script runs in it and it loads nothing from anywhere.
</footer>
</div>
</body>
</html>
`

const cautionsBlock = `{{define "cautions"}}<section id="cautions">
<h2>Before these numbers go into a model</h2>
<ul class="cautions">{{range .}}<li>{{.}}</li>{{end}}</ul>
</section>{{end}}`

const dailyBody = `<header class="mast">
<div class="kicker">ringlog · daily summary</div>
<h1>{{.DayLong}}</h1>
<div class="meta">{{plural .Hits "hit"}} recorded on {{.DayISO}}</div>
</header>

<section class="glance" aria-label="The day at a glance">
<div>
<h2>The day at a glance</h2>
<div class="tiles">
<div class="tile"><span class="n">{{.Hits}}</span><span class="l">hits</span></div>
<div class="tile accepted"><span class="n">{{.Accepted}}</span><span class="l">accepted</span></div>
<div class="tile flagged"><span class="n">{{.Flagged}}</span><span class="l">flagged</span></div>
<div class="tile rejected"><span class="n">{{.Rejected}}</span><span class="l">rejected</span></div>
</div>
{{if .Bar}}<div class="bar" role="img" aria-label="share of accepted, flagged and rejected hits">{{range .Bar}}{{if .N}}<span class="{{.Class}}" style="flex-grow: {{.N}}" title="{{.N}} {{.Class}}"></span>{{end}}{{end}}</div>
<p class="small">{{range $i, $b := .Bar}}{{if $i}} · {{end}}{{fmtpct $b.Pct}} % {{$b.Class}}{{end}}</p>{{end}}
</div>
<div>
<h2>Why hits were spoiled</h2>
{{if .TopReasons}}<p class="small">The reason that decided each flagged or rejected hit's verdict, one per hit.</p>
<ol class="top">{{range .TopReasons}}<li><span class="count">{{.Decided}}</span> × <code>{{.Code}}</code>{{with .Meaning}}: {{.}}{{end}}</li>{{end}}</ol>
{{with .AlsoFlagged}}<p class="small">Also flagged, beside the deciding reason: {{range $i, $r := .}}{{if $i}}, {{end}}<code>{{$r.Code}}</code> on {{plural $r.Side "hit"}}{{end}}.</p>{{end}}
{{else if .Hits}}<p>No hit was flagged or rejected.</p>{{else}}<p>No hit was recorded on this day.</p>{{end}}
{{if or .Superseded .Failed}}<p class="warn">{{with .Superseded}}<a href="#superseded">{{plural (len .) "earlier hit"}} superseded</a> by a changed file{{end}}{{if and .Superseded .Failed}} · {{end}}{{with .Failed}}<a href="#failed">{{plural (len .) "file"}} could not be read</a>{{end}}.</p>{{end}}
{{with .Prototypes}}<p class="small">{{range $i, $p := .}}{{if $i}}; {{end}}{{$p.Name}}: {{range $j, $r := $p.Revisions}}{{if $r.Today}}{{if $j}}, {{end}}<span class="swatch {{$r.Class}}"></span>{{$r.Name}} {{$r.Today}}{{end}}{{end}}{{end}} hits.</p>{{end}}
<p class="warn">Over-estimated damping makes a model unconservative: quote every value with its interval. <a href="#cautions">Cautions</a>.</p>
</div>
</section>

<section>
<h2>Hits of the day</h2>
{{if .Groups}}<table>
<thead><tr><th>bay</th><th>prototype</th><th>revision</th><th class="n">hits</th><th class="n">accepted</th><th class="n">flagged</th><th class="n">rejected</th><th>first – last</th></tr></thead>
<tbody>{{range .Groups}}<tr><td>{{.Bay}}</td><td>{{.Prototype}}</td><td>{{.Revision}}</td><td class="n">{{.Hits}}</td><td class="n">{{.Accepted}}</td><td class="n">{{.Flagged}}</td><td class="n">{{.Rej}}</td><td>{{.First}} – {{.Last}}</td></tr>{{end}}</tbody>
</table>{{else}}<p>No hit was recorded on this day.</p>{{end}}
</section>

{{if .Decisive}}<section id="decided">
<h2>What decided the verdicts</h2>
<p class="lede">Each flagged or rejected hit counted once, under the reason that decided its verdict: for a rejected hit its first rejecting reason in the order the rules run (when none rejected it, every mode was dropped: its first dropping reason); for a flagged hit its first reason that dropped a mode, else its first flag.</p>
<table>
<thead><tr><th>reason code</th><th>severity</th><th class="n">hits decided</th><th class="n">flagged</th><th class="n">rejected</th><th>what it means</th></tr></thead>
<tbody>{{range .Decisive}}<tr><td><code>{{.Code}}</code></td><td class="sev">{{.Severity}}</td><td class="n">{{.Decided}}</td><td class="n">{{.DecidedFlagged}}</td><td class="n">{{.DecidedRejected}}</td><td>{{.Meaning}}</td></tr>{{end}}</tbody>
</table>
{{with .AlsoFlagged}}<h3>Also flagged</h3>
<p class="lede">Reasons a hit carried beside the one that decided its verdict.</p>
<table>
<thead><tr><th>reason code</th><th>severity</th><th class="n">hits</th><th>what it means</th></tr></thead>
<tbody>{{range .}}<tr><td><code>{{.Code}}</code></td><td class="sev">{{.Severity}}</td><td class="n">{{.Side}}</td><td>{{.Meaning}}</td></tr>{{end}}</tbody>
</table>{{end}}
</section>{{end}}

{{if .Reasons}}<section>
<h2>Reasons, by code</h2>
<p class="lede">Each hit is counted once per reason code; a hit can carry several.</p>
<table>
<thead><tr><th>reason code</th><th>severity</th><th class="n">hits</th><th class="n">flagged</th><th class="n">rejected</th><th class="n">decided the verdict</th><th>what it means · an example from the day</th></tr></thead>
<tbody>{{range .Reasons}}<tr><td><code>{{.Code}}</code></td><td class="sev">{{.Severity}}</td><td class="n">{{.Hits}}</td><td class="n">{{.Flagged}}</td><td class="n">{{.Rejected}}</td><td class="n">{{.Decided}}</td><td>{{with .Meaning}}{{.}}<br>{{end}}<span class="small">{{.Example}}</span></td></tr>{{end}}</tbody>
</table>
</section>{{end}}

{{with .Superseded}}<section id="superseded">
<h2>Superseded by a changed file</h2>
<p class="lede">These files changed after they were recorded (appended to, rewritten or replaced under the same name). The hit of the earlier bytes is kept as provenance and no longer counted; the hit of the file's content now counts. <code>ringlog history --superseded</code> lists them.</p>
<table>
<thead><tr><th>file</th><th>earlier hit</th><th>its verdict</th><th>superseded at</th><th>now counted</th><th>its verdict</th></tr></thead>
<tbody>{{range .}}<tr><td><span class="file" title="{{.Path}}">{{.File}}</span><br><span class="small">hit time {{.HitTime}}</span></td><td><code>{{.SHA256}}</code></td><td>{{.Verdict}}</td><td>{{.At}}</td><td><code>{{.BySHA256}}</code>{{with .ByFile}}<br><span class="small">the bytes of <span class="file">{{.}}</span></span>{{end}}</td><td>{{.ByVerdict}}</td></tr>{{end}}</tbody>
</table>
</section>{{end}}

{{with .Failed}}<section id="failed">
<h2>Files that could not be read</h2>
<p class="lede">Given up on this day; recorded again when the file changes. <code>ringlog status --failed</code> lists every failed file of the history.</p>
<table>
<thead><tr><th>file</th><th>time</th><th class="n">attempts</th><th>error</th></tr></thead>
<tbody>{{range .}}<tr><td><span class="file" title="{{.Path}}">{{.File}}</span></td><td>{{.Time}}</td><td class="n">{{.Attempts}}</td><td class="small">{{.Error}}</td></tr>{{end}}</tbody>
</table>
</section>{{end}}

{{range $pi, $p := .Prototypes}}<section>
<h2>Where each mode stands: {{$p.Name}}</h2>
<p class="lede">{{$p.Campaign}}. Mean of the campaign per revision with the 95 % interval of the mean (Student t); the day's hits ringed.</p>
<div class="legend">{{range $p.Revisions}}<span><span class="swatch {{.Class}}"></span>{{.Name}} ({{.Campaign}} hits, {{.Today}} on this day)</span>{{end}}
<span><span class="dot"></span>earlier hits</span><span><span class="ring"></span>this day's hits</span><span><span class="bandkey"></span>mean and its 95 % interval</span></div>
{{range $p.Modes}}<div class="mode">
<h3>{{.Name}}</h3>
<table>
<thead><tr><th>revision</th><th class="n">hits</th><th class="n">mean ζ [%]<br><span class="ci">95 % interval</span></th><th class="n">geometric mean ζ [%]<br><span class="ci">95 % interval</span></th><th class="n">mean f [Hz]<br><span class="ci">95 % interval</span></th><th class="n">this day: hits</th><th class="n">this day: mean ζ [%]</th></tr></thead>
<tbody>{{range .Rows}}<tr><td><span class="swatch {{.Class}}"></span>{{.Revision}}</td><td class="n">{{.N}}</td><td class="n">{{.Mean}}<br><span class="ci">{{.CI}}</span></td><td class="n">{{.Geo}}<br><span class="ci">{{.GeoCI}}</span></td><td class="n">{{.Freq}}<br><span class="ci">{{.FreqCI}}</span></td><td class="n">{{.TodayN}}</td><td class="n">{{if .TodayN}}<span class="pos-{{.Position}}" title="{{.PositionNote}}">{{.TodayMean}}</span>{{else}}–{{end}}</td></tr>{{end}}</tbody>
</table>
{{range .Rows}}{{if .PositionNote}}{{if or (eq .Position "high") (eq .Position "low")}}<p class="warn">{{.Revision}}: this day's mean damping is {{.PositionNote}}.</p>{{end}}{{end}}{{end}}
{{with .PlotError}}<p class="warn">The plots could not be drawn: {{.}}</p>{{end}}
<div class="figs">{{with .Damping}}<figure>{{.}}<figcaption>Damping ratio over the campaign.</figcaption></figure>{{end}}{{with .Frequency}}<figure>{{.}}<figcaption>Natural frequency over the campaign.</figcaption></figure>{{end}}</div>
</div>{{end}}
{{with $p.Note}}<p class="note">{{.}}</p>{{end}}
{{template "levels" $p.Levels}}
{{template "leftout" $p.LeftOut}}
{{with $p.Rayleigh}}<h3>Rayleigh coefficients of {{$p.Name}}</h3>
<p class="lede">ζ(ω) = α/(2ω) + βω/2 with ω in rad/s, fitted to the mean damping of each mode over the campaign, weighted by its uncertainty; α and β not negative. Intervals 95 %.</p>
{{range .}}<div class="rayleigh">
<div>
<h3><span class="swatch {{.Class}}"></span>Revision {{.Revision}}</h3>
{{if .Error}}<p>{{.Error}}</p>{{else}}<dl class="coef">
<dt>α (mass) [1/s]</dt><dd>{{.Alpha}} <span class="small">({{.AlphaCI}})</span></dd>
<dt>β (stiffness) [s]</dt><dd>{{.Beta}} <span class="small">({{.BetaCI}})</span></dd>
<dt>β alone, α = 0 [s]</dt><dd>{{.BetaOnly}} <span class="small">({{.BetaOnlyCI}})</span></dd>
<dt>fit</dt><dd>{{.Method}}, {{plural .NHits "hit"}}</dd>
<dt>follows the modes</dt><dd>{{.Band}}</dd>
</dl>
<table>
<thead><tr><th>mode</th><th class="n">f [Hz]</th><th class="n">measured ζ [%]</th><th>95 %</th><th class="n">fitted</th><th class="n">α = 0</th><th>within scatter</th></tr></thead>
<tbody>{{range .Rows}}<tr><td class="name">{{.Name}}</td><td class="n">{{.Freq}}</td><td class="n">{{.Measured}}</td><td class="ci">{{.MeasuredCI}}</td><td class="n">{{.Fitted}}</td><td class="n">{{.FittedStiff}}</td><td>{{.InsideText}}</td></tr>{{end}}</tbody>
</table>{{end}}
{{range .Notes}}<p class="note">{{.}}</p>{{end}}
</div>
{{with .Plot}}<figure>{{.}}<figcaption>Measured mean damping with its 95 % interval; Rayleigh curve (solid), stiffness only (dashed); shaded: where the curve follows the modes.</figcaption></figure>{{end}}
</div>{{end}}{{end}}
</section>{{end}}

<section>
<h2>Flagged and rejected hits</h2>
{{if .Spoiled}}<p class="lede">Each record as read from its file again (grey), with the envelope of its stored modes (red, dashed: their frequencies and damping ratios, amplitudes fitted to the record) from the onset of the free decay (violet). Where the envelope does not follow the record, the stored damping does not describe the hit.</p>
<div class="cards">{{range .Spoiled}}<article class="card {{.Verdict}}">
<h3><span class="file">{{.File}}</span></h3>
<div class="small">{{.Time}} · {{.Where}} · <span class="badge {{.Verdict}}">{{.Verdict}}</span></div>
{{if .Plot}}<figure>{{.Plot}}</figure>{{else}}<div class="noplot">{{.NoPlot}}</div>{{end}}
<ul>{{range .Reasons}}<li><code>{{.Code}}</code> <span class="sev">{{.Severity}}</span>: {{.Message}}{{if .More}} <span class="small">(and {{.More}} more of this code)</span>{{end}}</li>{{end}}</ul>
<div class="modes">{{range $i, $m := .Modes}}{{if $i}}<br>{{end}}{{$m}}{{end}}</div>
{{with .Note}}<p class="note">{{.}}</p>{{end}}
<p class="note">File: <span class="file">{{.Path}}</span></p>
</article>{{end}}</div>
{{else}}<p>None: every hit of the day was accepted.</p>{{end}}
</section>

{{template "cautions" .Cautions}}
`

const compareBody = `<header class="mast">
<div class="kicker">ringlog · revision report</div>
<h1>{{.Prototype}}: revision {{.B}} against {{.A}}</h1>
<div class="meta">{{.A}}: {{plural .HitsA "hit"}} ({{.UsedA}} usable) · {{.B}}: {{plural .HitsB "hit"}} ({{.UsedB}} usable)</div>
</header>

<section class="glance" aria-label="The comparison at a glance">
<div>
<h2>At a glance</h2>
<div class="tiles">
<div class="tile"><span class="n">{{len .Modes}}</span><span class="l">modes compared</span></div>
<div class="tile rejected"><span class="n">{{.Shown}}</span><span class="l">damping differs</span></div>
</div>
<p class="warn">Over-estimated damping makes a model unconservative: quote every value with its interval. <a href="#cautions">Cautions</a>.</p>
</div>
<div>
<h2>What changed</h2>
<ul class="top">{{range .Modes}}<li><span class="verdict{{if .Shown}} differs{{end}}">{{.Verdict}}</span>{{.Name}}: {{.Direction}}{{if .Shown}}, ratio {{.Ratio}} ({{.RatioCI}}){{end}}</li>{{else}}<li>No usable mode in either revision.</li>{{end}}</ul>
</div>
</section>

{{with .RatioPlot}}<section>
<h2>Ratio of damping per mode</h2>
<p class="lede">Geometric mean of the damping ratio of {{$.B}} over that of {{$.A}}, with its 95 % interval (Welch's t test on log ζ). Dark: the interval excludes 1, a difference is shown.</p>
<figure>{{.}}</figure>
</section>{{end}}

{{range .Modes}}<section class="mode">
<h2>{{.Name}}</h2>
<p class="sentence"><span class="verdict{{if .Shown}} differs{{end}}">{{.Verdict}}</span>{{.Sentence}}</p>
<div class="rayleigh">
<div>
<table>
<thead><tr><th></th><th class="n">{{$.A}}</th><th class="n">{{$.B}}</th></tr></thead>
<tbody>
<tr><td>hits</td><td class="n">{{.NA}}</td><td class="n">{{.NB}}</td></tr>
<tr><td>geometric mean ζ [%]</td><td class="n">{{.GeoA}}</td><td class="n">{{.GeoB}}</td></tr>
<tr><td>95 % interval [%]</td><td class="n ci">{{.GeoACI}}</td><td class="n ci">{{.GeoBCI}}</td></tr>
<tr><td>mean frequency [Hz]</td><td class="n">{{.FreqA}}</td><td class="n">{{.FreqB}}</td></tr>
</tbody>
</table>
<dl class="coef">
<dt>ratio {{$.B}} / {{$.A}}</dt><dd>{{.Ratio}} <span class="small">(95 %: {{.RatioCI}}, p {{.P}})</span></dd>
<dt>frequency shift</dt><dd>{{.Shift}} Hz <span class="small">(95 %: {{.ShiftCI}})</span></dd>
</dl>
<p class="note">{{.FreqSentence}}</p>
</div>
{{if .Plot}}<figure>{{.Plot}}<figcaption>{{if .DotsNote}}Hits as dots ({{.DotsNote}}; the box and the mean use every hit){{else}}Every hit (dots){{end}}, quartiles and median (box), geometric mean with its 95 % interval (square and bar).</figcaption></figure>{{else}}{{with .PlotError}}<p class="warn">{{.}}</p>{{end}}{{end}}
</div>
</section>{{end}}

{{if .Excluded}}<section>
<h2>Left out of the statistics</h2>
<table>
<thead><tr><th>reason code</th><th>what</th><th class="n">{{.A}}</th><th class="n">{{.B}}</th><th>what it means</th></tr></thead>
<tbody>{{range .Excluded}}<tr><td><code>{{.Code}}</code></td><td>{{.What}}</td><td class="n">{{.A}}</td><td class="n">{{.B}}</td><td>{{.Meaning}}</td></tr>{{end}}</tbody>
</table>
{{template "byhand" .ByHand}}
</section>{{end}}

{{template "cautions" .Cautions}}
`

func mustPage(name, body string) *template.Template {
	t := template.New(name).Funcs(funcs)
	template.Must(t.New("css").Parse(css))
	template.Must(t.Parse(cautionsBlock))
	template.Must(t.Parse(levelsBlock))
	template.Must(t.Parse(leftOutBlock))
	return template.Must(t.New(name).Parse(head + body + foot))
}

var (
	dailyTmpl   = mustPage("daily", dailyBody)
	compareTmpl = mustPage("compare", compareBody)
)
