package report

import "html/template"

// page is the report. It is written as well-formed XHTML-style HTML (every
// element closed) so that it parses with encoding/xml as well as in a
// browser; it loads nothing from the network: the charts are data URIs and
// the fonts are the reader's own.
var page = template.Must(template.New("report").Funcs(template.FuncMap{
	"inc": func(i int) int { return i + 1 },
}).Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8"/>
<meta name="viewport" content="width=device-width, initial-scale=1"/>
<meta name="generator" content="spillway report"/>
<title>{{.Title}}</title>
<style>
:root { --ink: #1e1e1e; --muted: #555555; --direct: #1a5a96; --via: #ee9a22; --alert: #b3261e; --rule: #d9d9d9; --shade: #f6f2e8; }
* { box-sizing: border-box; }
#validation li.detail { list-style: none; margin-left: 1.2em; color: var(--muted); }
body { font-family: "Liberation Sans", "Helvetica Neue", Arial, sans-serif; color: var(--ink); margin: 0; line-height: 1.45; font-size: 16px; background: #ffffff; }
main { max-width: 1180px; margin: 0 auto; padding: 28px 32px 48px; }
h1 { font-size: 30px; margin: 0 0 4px; }
h2 { font-size: 22px; margin: 36px 0 10px; padding-bottom: 4px; border-bottom: 2px solid var(--ink); }
h3 { font-size: 18px; margin: 22px 0 6px; }
p.sub { color: var(--muted); margin: 0 0 18px; }
.verdict { border: 3px solid var(--alert); background: #fbeceb; padding: 14px 18px; margin: 16px 0 22px; }
.verdict strong { color: var(--alert); font-size: 20px; }
.verdict ul { margin: 8px 0 0 0; }
.passed { border-left: 6px solid var(--direct); background: #eef3f9; padding: 10px 16px; margin: 16px 0 22px; }
.job { font-size: 18px; margin: 10px 0; }
ul.findings li { margin: 6px 0; font-size: 17px; }
table { border-collapse: collapse; width: 100%; margin: 8px 0 6px; font-size: 15px; }
th, td { text-align: left; padding: 6px 10px; border-bottom: 1px solid var(--rule); vertical-align: top; }
th { background: #f2f2f2; font-weight: bold; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.fails td { color: var(--alert); font-weight: bold; }
td.clear { font-weight: bold; }
.note { color: var(--muted); font-size: 14px; margin: 4px 0 12px; }
figure { margin: 22px 0 30px; }
figure img { width: 100%; height: auto; border: 1px solid var(--rule); display: block; }
figcaption { color: var(--muted); font-size: 14px; margin-top: 6px; }
.path-via { border-left: 5px solid var(--via); }
.path-direct { border-left: 5px solid var(--direct); }
pre { background: #f4f4f4; padding: 12px 14px; overflow-x: auto; white-space: pre-wrap; word-break: break-all; font-size: 14px; }
footer { color: var(--muted); font-size: 13px; margin-top: 40px; border-top: 1px solid var(--rule); padding-top: 8px; }
@page { size: A4; margin: 14mm; }
@media print {
  body { font-size: 10.5pt; }
  main { max-width: none; padding: 0; }
  h1 { font-size: 20pt; }
  h2 { font-size: 14pt; margin-top: 18pt; break-after: avoid; }
  h3 { break-after: avoid; }
  table { font-size: 9pt; }
  figure, table, .verdict, .passed, pre { break-inside: avoid; }
  figure img { border: none; }
  .verdict { background: none; }
}
</style>
</head>
<body>
<main>
<header>
<h1>{{.Title}}</h1>
<p class="sub">{{.Subtitle}}</p>
</header>
{{if not .Trustworthy}}
<section class="verdict" id="verdict">
<strong>Not trustworthy: do not base decisions on this fit yet.</strong>
<p>The fit failed the checks below. Rerun with more warm-up and draws, or revisit the data and the model, before using these numbers.</p>
<ul>{{range .Reasons}}
<li>{{.}}</li>{{end}}
</ul>
</section>
{{else}}
<section class="passed" id="verdict">{{.Checks}}</section>
{{end}}
{{if .Notes}}<ul class="support" id="support">{{range .Notes}}
<li>{{.}}</li>{{end}}
</ul>{{end}}
<p class="job" id="job">{{.Job}}</p>

<h2>Headline findings</h2>
<ul class="findings" id="findings">{{range .Findings}}
<li>{{.}}</li>{{end}}
</ul>

{{if .Compare}}
<h2>{{.Compare.Window}} against the previous quarter and a year earlier</h2>
<p class="note">Changes are computed draw by draw from the posterior (the same draw in both quarters), so their 90% intervals account for what the quarters share. "Clear" means the interval excludes zero. Outcome units, or percentage points for the share via search. "Spend change" is the change in the channel's spend between the two quarters: an effect that moves with its spend is spend-driven, not a change in how well the channel works.</p>
<table id="compare">
<thead><tr><th>Channel</th><th>Path</th><th class="num">{{.Compare.Window}}</th><th class="num">{{.Compare.Prev}}</th><th class="num">Change (90% interval)</th><th class="num">Spend change</th><th>Clear?</th><th class="num">{{.Compare.Year}}</th><th class="num">Change (90% interval)</th><th class="num">Spend change</th><th>Clear?</th></tr></thead>
<tbody>{{range .Compare.Rows}}
<tr><td>{{.Channel}}</td><td>{{.PathLabel}}</td><td class="num">{{.Now}}</td><td class="num">{{.Prev}}</td><td class="num">{{.PrevChange}}</td><td class="num">{{.PrevSpend}}</td><td{{if .PrevClear}} class="clear"{{end}}>{{.PrevSig}}</td><td class="num">{{.Year}}</td><td class="num">{{.YearChange}}</td><td class="num">{{.YearSpend}}</td><td{{if .YearClear}} class="clear"{{end}}>{{.YearSig}}</td></tr>{{end}}
</tbody>
</table>
{{end}}
{{if .CompareNote}}<p class="note">{{.CompareNote}}</p>{{end}}

<h2>Charts</h2>
{{range $i, $c := .Charts}}
<figure id="chart-{{$c.Name}}">
<img src="{{$c.Src}}" alt="{{$c.Alt}}" width="1600" height="900"/>
<figcaption>Figure {{inc $i}}. {{$c.Title}} ({{$c.Name}}.png).</figcaption>
</figure>
{{end}}

<h2>Effects</h2>
<p class="note">Incremental {{.Data.OutcomeName}} over each window: posterior mean and 90% credible interval, and the effect {{.PerLabel}} of the channel in the window. "Share via search" is the fraction of the channel's total effect that runs through branded search.</p>
{{range .EffectTables}}
<h3>{{.Heading}} <span class="note">({{.Weeks}})</span></h3>
<table id="{{.ID}}">
<thead><tr><th>Channel</th><th>Path</th><th class="num">Mean</th><th class="num">90% interval</th><th class="num">{{$.PerLabel}}</th></tr></thead>
<tbody>{{range .Rows}}
<tr data-channel="{{.Channel}}" data-path="{{.Path}}" data-window="{{.Window}}"><td>{{.Channel}}</td><td>{{.PathLabel}}</td><td class="num">{{.Mean}}</td><td class="num">{{.Interval}}</td><td class="num">{{.Per}}</td></tr>{{end}}
</tbody>
</table>
{{end}}

{{if .Returns}}
<h2>Returns</h2>
<p class="note">{{.ReturnsNote}}</p>
<table id="returns">
<thead><tr><th>Channel</th><th class="num">Return on spend, {{.Window}} ({{.PerLabel}})</th><th class="num">Cost per incremental {{.Data.OutcomeName}}, {{.Window}}</th><th class="num">Return on spend, whole period</th><th class="num">Marginal return at current spend ({{.PerLabel}})</th></tr></thead>
<tbody>{{range .Returns}}
<tr data-channel="{{.Column}}"><td>{{.Channel}}</td><td class="num">{{.ROS}}</td><td class="num">{{.Cost}}</td><td class="num">{{.ROSAll}}</td><td class="num">{{.Marginal}}</td></tr>{{end}}
</tbody>
</table>
{{end}}

{{with .Regions}}
<h2>Regions</h2>
<p id="regions-intro">{{.Intro}}</p>
<ul class="findings" id="regions-findings">{{range .Findings}}
<li>{{.}}</li>{{end}}
</ul>
<table id="regions">
<thead><tr><th>Channel</th><th>Region</th><th>Measure</th><th class="num">Region</th><th class="num">Pooled</th><th class="num">Difference (90% interval)</th><th class="num">Probability beyond the stated amount</th><th>Larger than its uncertainty?</th></tr></thead>
<tbody>{{range .Rows}}
<tr data-region="{{.Region}}" data-measure="{{.Measure}}"><td>{{.Channel}}</td><td>{{.Region}}</td><td>{{if eq .Measure "mediated_share"}}share via search{{else}}return on spend{{end}}</td><td class="num">{{.Value}}</td><td class="num">{{.Pooled}}</td><td class="num">{{.Difference}} ({{.Interval}})</td><td class="num">{{.Beyond}}</td><td{{if .Clear}} class="clear"{{end}}>{{.Verdict}}</td></tr>{{end}}
</tbody>
</table>
<p class="note">{{.Note}}</p>
{{end}}
{{if .Implied}}
<h2>What the priors assumed</h2>
<p class="note">{{.ImpliedNote}}</p>
<table id="priors-implied">
<thead><tr><th>Channel</th><th>Path</th><th>Window</th><th>Measure</th><th class="num">Stated</th><th class="num">Implied by the priors</th><th class="num">Posterior</th></tr></thead>
<tbody>{{range .Implied}}
<tr data-channel="{{.Column}}"><td>{{.Channel}}</td><td>{{.Path}}</td><td>{{.Window}}</td><td>{{.Measure}}</td><td class="num">{{.Stated}}</td><td class="num">{{.Prior}}</td><td class="num">{{.Posterior}}</td></tr>{{end}}
</tbody>
</table>
{{end}}

<h2>Demand borrowed by paid search</h2>
<p class="note">{{.BorrowedNote}}</p>
<table id="borrowed">
<thead><tr><th>Channel</th><th>Measure</th><th class="num">Mean</th><th class="num">90% interval</th></tr></thead>
<tbody>{{range .Borrowed}}
<tr data-channel="{{.Channel}}" data-measure="{{.Measure}}"><td>{{.Channel}}</td><td>{{.Label}}</td><td class="num">{{.Mean}}</td><td class="num">{{.Interval}}</td></tr>{{end}}
</tbody>
</table>

<h2>Causal assumptions and sensitivity</h2>
<p>The split into direct and via-search effects (natural direct and indirect effects, Pearl 2001; Imai, Keele and Tingley 2010) holds under these assumptions:</p>
<ul id="assumptions">{{range .Assumptions}}
<li>{{.}}</li>{{end}}
</ul>
<p>Sensitivity: the first assumption is probed by letting the errors of the demand and outcome stages correlate with rho (rho = 0 is the main result) and asking how far the via-search effect moves.</p>
<ul id="sensitivity">{{range .Sensitivity}}
<li>{{.}}</li>{{end}}
</ul>

{{with .Drift}}
<h2>Effectiveness over time and lift tests</h2>
{{if .Intro}}<p>{{.Intro}}</p>{{end}}
{{if .Changes}}<table id="drift">
<thead><tr><th>Channel</th><th>Path</th><th class="num">Last quarter / first</th><th class="num">90% interval</th><th class="num">P(up &gt; 10%)</th><th class="num">P(down &gt; 10%)</th><th>Highest quarter</th><th>Lowest quarter</th><th>Verdict</th></tr></thead>
<tbody>{{range .Changes}}
<tr><td>{{.Channel}}</td><td>{{.Path}}</td><td class="num">{{.Ratio}}</td><td class="num">{{.Interval}}</td><td class="num">{{.Up}}</td><td class="num">{{.Dn}}</td><td>{{.Peak}}</td><td>{{.Trough}}</td><td>{{.Verdict}}</td></tr>{{end}}
</tbody>
</table>{{end}}
{{if .Lifts}}<table id="lifts">
<thead><tr><th>Channel</th><th>Metric</th><th>Weeks</th><th class="num">Test (90% interval)</th><th class="num">Model with the test [90%]</th><th class="num">Rest of the data</th><th class="num">p</th><th>Verdict</th><th>Left out by</th></tr></thead>
<tbody>{{range .Lifts}}
<tr><td>{{.Channel}}</td><td>{{.Metric}}</td><td>{{.Weeks}}</td><td class="num">{{.Test}}</td><td class="num">{{.Model}}</td><td class="num">{{.Rest}}</td><td class="num">{{.P}}</td><td>{{.Verdict}}</td><td>{{.LeftOut}}</td></tr>{{end}}
</tbody>
</table>{{end}}
<ul id="drift-notes">{{range .Notes}}
<li>{{.}}</li>{{end}}
</ul>
{{end}}

{{with .Validation}}
<h2>Validation</h2>
<p>From <code>spillway validate</code> on this fit: {{.Intro}}.</p>
<ul id="validation">{{range .Verdict}}
{{if .Head}}<li><strong>{{.Text}}</strong></li>{{else}}<li class="detail">{{.Text}}</li>{{end}}{{end}}
</ul>
{{if .Src}}<figure><img src="{{.Src}}" alt="Validation: {{.Intro}}"/></figure>{{end}}
<table id="validation-metrics">
<thead><tr><th>Check</th><th>Effect or stage</th><th>Channel</th><th>Metric</th><th class="num">Value</th></tr></thead>
<tbody>{{range .Rows}}
<tr><td>{{.Check}}</td><td>{{.Effect}}</td><td>{{.Channel}}</td><td>{{.Metric}}</td><td class="num">{{.Value}}</td></tr>{{end}}
</tbody>
</table>
{{end}}

{{with .Plan}}<h2>{{.Heading}}</h2>
<p>{{.Intro}}</p>
<table id="plan">
<thead><tr><th>Channel</th><th class="num">Current</th><th class="num">Planned</th><th class="num">Change</th><th>Limits</th><th class="num">Incremental outcome, planned (90% interval)</th><th class="num">Marginal return (90% interval)</th></tr></thead>
<tbody>{{range .Rows}}
<tr data-channel="{{.Channel}}"><td>{{.Channel}}</td><td class="num">{{.Current}}</td><td class="num">{{.Planned}}</td><td class="num">{{.Change}}</td><td>{{.Limits}}</td><td class="num">{{.Incremental}}</td><td class="num">{{.Marginal}}</td></tr>{{end}}
</tbody>
</table>
<p id="plan-gain">{{.Gain}}</p>
{{if .Check}}<p class="note">{{.Check}}</p>{{end}}
<figure><img src="{{.Src}}" alt="Budget plan: current against planned spend per channel, the gain over the current plan with its 90% interval, and each channel's marginal return at the plan"/></figure>
<ul id="plan-notes">{{range .Notes}}
<li>{{.}}</li>{{end}}
</ul>

{{end}}<h2>Cautions</h2>
<ul id="cautions">{{range .Cautions}}
<li>{{.}}</li>{{end}}
</ul>

<h2>Convergence checks</h2>
<p class="note">{{.Checks}} Thresholds per Vehtari, Gelman, Simpson, Carpenter and Bürkner (2021).</p>
<table id="stages">
<thead><tr><th>Stage</th><th class="num">Parameters</th><th class="num">Largest R-hat</th><th class="num">Smallest bulk ESS</th><th class="num">Smallest tail ESS</th><th class="num">Divergences</th><th class="num">Wall time (s)</th></tr></thead>
<tbody>{{range .Stages}}
<tr{{if .Fails}} class="fails"{{end}}><td>{{.Stage}}</td><td class="num">{{.Params}}</td><td class="num">{{.MaxRhat}}</td><td class="num">{{.MinBulk}}</td><td class="num">{{.MinTail}}</td><td class="num">{{.Divergences}}</td><td class="num">{{.Seconds}}</td></tr>{{end}}
</tbody>
</table>

<h2>Data</h2>
<p id="data">{{.Data.Weeks}} weeks, {{.Data.Range}}; {{.Data.Regions}}.{{if .Data.WindowWeeks}} Review window {{.Data.WindowWeeks}}.{{end}} Total {{.Data.OutcomeName}}: {{.Data.Outcome}}; total {{.Data.QName}}: {{.Data.Queries}}.</p>
<table id="spend">
<thead><tr><th>Channel</th><th>Role</th><th class="num">Total spend{{.Data.Currency}}</th><th class="num">Share of spend</th><th class="num">Spend in {{.Window}}{{.Data.Currency}}</th></tr></thead>
<tbody>{{range .Data.Spend}}
<tr><td>{{.Channel}}</td><td>{{.Role}}</td><td class="num">{{.Total}}</td><td class="num">{{.Share}}</td><td class="num">{{.Window}}</td></tr>{{end}}
</tbody>
</table>

<h2>How to rerun</h2>
<p>To redo the whole job behind this page (check the data, fit, split, charts and this report, with the same data, seed and window) into a new folder, run this from the folder the original run was started in (the data file's path is as it was given then); the same inputs give byte-identical draws and tables:</p>
<pre id="command">{{.Command}}</pre>
<p class="note">To rebuild only this page from the fit folder (after changing the window, for example): <code id="rebuild">{{.Rebuild}}</code></p>
<footer>Made by spillway. This page is self-contained: it needs no network and prints on A4.</footer>
</main>
</body>
</html>
`))
