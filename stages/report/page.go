package report

import "html/template"

// pageTemplate is the whole page: inline CSS, inline SVG, no script and no
// external resource of any kind, so it opens offline from disk.
var pageTemplate = template.Must(template.New("page").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{{.In.Campaign}} · squall campaign report</title>
<style>
:root {
  --ink: #1d2b36; --muted: #5b6b78; --line: #dfe5ea; --paper: #ffffff; --ground: #eef2f4;
  --accent: #1f6f78; --accent-soft: #e3f1f1; --warn: #9a5b00; --warn-soft: #fff4dc; --warn-edge: #e0a43a;
}
* { box-sizing: border-box; }
html { background: var(--ground); }
body { margin: 0; color: var(--ink); font: 15px/1.5 "Liberation Sans", Arial, Helvetica, sans-serif; }
a { color: var(--accent); }
header.top { background: #14262f; color: #f1f6f7; padding: 28px 0 22px; }
.wrap { max-width: 1180px; margin: 0 auto; padding: 0 28px; }
header.top .eyebrow { font-size: 12px; letter-spacing: .14em; text-transform: uppercase; color: #8fc3c4; margin: 0 0 6px; }
header.top h1 { font-size: 30px; line-height: 1.15; margin: 0 0 10px; font-weight: 700; }
header.top dl { display: flex; flex-wrap: wrap; gap: 6px 26px; margin: 0; font-size: 13px; color: #c5d5da; }
header.top dt { display: inline; color: #8fa9b1; margin-right: 6px; }
header.top dd { display: inline; margin: 0; color: #eef6f7; }
.status-ok { color: #9fe0b4 !important; } .status-bad { color: #ffb3a8 !important; }
.caution { display: flex; gap: 14px; align-items: flex-start; background: var(--warn-soft); border: 1px solid #f1d49b;
  border-left: 6px solid var(--warn-edge); border-radius: 8px; padding: 14px 18px; margin: 22px 0 8px; color: #5a3a00; }
.caution .mark { flex: none; width: 26px; height: 26px; border-radius: 50%; background: var(--warn-edge); color: #fff;
  font-weight: 700; text-align: center; line-height: 26px; }
.caution strong { display: block; color: var(--warn); }
nav.toc { display: flex; flex-wrap: wrap; gap: 8px; margin: 14px 0 6px; }
nav.toc a { text-decoration: none; font-size: 13px; padding: 5px 12px; border-radius: 999px; background: var(--paper);
  border: 1px solid var(--line); color: var(--ink); }
nav.toc a:hover { border-color: var(--accent); color: var(--accent); }
section.card { background: var(--paper); border: 1px solid var(--line); border-radius: 12px; padding: 22px 26px 24px; margin: 20px 0;
  box-shadow: 0 1px 2px rgba(20, 38, 47, .05); }
section.card > h2 { margin: 0 0 4px; font-size: 20px; display: flex; align-items: baseline; gap: 10px; }
section.card > h2 .num { font-size: 12px; color: var(--accent); background: var(--accent-soft); border-radius: 6px; padding: 1px 7px; font-weight: 700; }
h3 { font-size: 15px; margin: 20px 0 6px; }
p.intro { color: var(--muted); margin: 2px 0 14px; max-width: 880px; }
p.missing { margin: 8px 0 0; padding: 12px 14px; border: 1px dashed #c3ced6; border-radius: 8px; color: var(--muted); background: #fafcfd; }
ul.notes { margin: 10px 0 0; padding-left: 18px; color: var(--warn); font-size: 13px; }
.kpis { display: grid; grid-template-columns: repeat(auto-fill, minmax(150px, 1fr)); gap: 12px; margin: 6px 0 16px; }
.kpi { border: 1px solid var(--line); border-radius: 10px; padding: 10px 14px; background: #fbfcfd; }
.kpi b { display: block; font-size: 22px; line-height: 1.2; }
.kpi span { font-size: 12px; color: var(--muted); }
.cols { display: grid; grid-template-columns: repeat(auto-fit, minmax(320px, 1fr)); gap: 8px 28px; }
.figs { display: grid; grid-template-columns: repeat(auto-fill, minmax(460px, 1fr)); gap: 18px; margin-top: 10px; }
figure { margin: 0; border: 1px solid var(--line); border-radius: 10px; padding: 10px 10px 8px; background: #fff; }
figure.wide { overflow-x: auto; }
figcaption { font-size: 12px; color: var(--muted); margin-top: 4px; }
svg.plot { display: block; width: 100%; height: auto; }
figure.wide svg.plot { width: auto; max-width: none; }
svg.plot image { image-rendering: pixelated; }
svg.plot text { font-family: "Liberation Sans", Arial, Helvetica, sans-serif !important; }
table { border-collapse: collapse; width: 100%; font-size: 13px; margin: 6px 0 4px; }
th, td { text-align: left; padding: 5px 9px; border-bottom: 1px solid var(--line); vertical-align: top; }
th { font-size: 12px; color: var(--muted); font-weight: 600; background: #f6f8f9; position: sticky; top: 0; }
tbody tr:nth-child(even) td { background: #fbfcfd; }
td.n { font-variant-numeric: tabular-nums; }
.scroll { max-height: 420px; overflow: auto; border: 1px solid var(--line); border-radius: 8px; }
.scroll table { margin: 0; }
.tnote { font-size: 12px; color: var(--muted); margin: 0 0 4px; }
.chip { display: inline-block; font-size: 11.5px; line-height: 18px; padding: 0 8px; border-radius: 999px; color: #fff; margin: 0 4px 2px 0; white-space: nowrap; }
.legend { font-size: 12px; color: var(--muted); margin: 6px 0 0; }
details { margin: 12px 0 0; }
details > summary { cursor: pointer; color: var(--accent); font-size: 13.5px; font-weight: 600; }
pre.record { background: #0f1d24; color: #d8e6ea; padding: 14px 16px; border-radius: 8px; font: 12px/1.45 "Liberation Mono", "DejaVu Sans Mono", monospace;
  max-height: 520px; overflow: auto; white-space: pre; }
footer { color: var(--muted); font-size: 12px; padding: 10px 0 40px; }
</style>
</head>
<body>
<header class="top"><div class="wrap">
<p class="eyebrow">squall · campaign report</p>
<h1>{{.In.Campaign}}</h1>
<dl>
{{with .In.CampaignFile}}<div><dt>campaign file</dt><dd>{{.}}</dd></div>{{end}}
{{with .In.RunID}}<div><dt>run</dt><dd>{{.}}</dd></div>{{end}}
{{with .In.Status}}<div><dt>status</dt><dd class="{{if eq . "ok"}}status-ok{{else}}status-bad{{end}}">{{.}}</dd></div>{{end}}
{{with .In.Tool}}<div><dt>tool</dt><dd>{{.}}</dd></div>{{end}}
{{with .In.When}}<div><dt>when</dt><dd>{{.}}</dd></div>{{end}}
</dl>
</div></header>
<main class="wrap">
<div class="caution" role="note"><div class="mark">!</div><div><strong>Research results, not forecasts or warnings</strong>{{.Caution}}</div></div>
<nav class="toc">
<a href="#glance">Campaign at a glance</a><a href="#labels">Labels</a><a href="#evaluation">Evaluation</a><a href="#events">Events</a>
<a href="#maps">Event density maps</a><a href="#trends">Trends</a><a href="#record">Reproducibility record</a>
</nav>

<section class="card" id="glance">
<h2><span class="num">1</span>Campaign at a glance</h2>
<div class="kpis">
<div class="kpi"><b>{{len .In.Scenarios}}</b><span>scenarios</span></div>
<div class="kpi"><b>{{len .In.Channels}}</b><span>channels</span></div>
<div class="kpi"><b>{{len .In.Stages}}</b><span>stages</span></div>
<div class="kpi"><b>{{.Instances}}</b><span>stage instances</span></div>
<div class="kpi"><b>{{.Reused}}</b><span>reused from the cache</span></div>
</div>
{{if .Counts}}<p class="legend">{{range .Counts}}<span class="chip" style="background:{{.Color}}">{{.Count}} {{.State}}</span>{{end}}</p>{{end}}
<div class="cols">
<div>
<h3>Scenarios</h3>
{{if .Glance.Scenarios}}<table><thead><tr><th>scenario</th><th>years</th><th>blocks</th><th>calendar</th></tr></thead><tbody>
{{range .Glance.Scenarios}}<tr>{{range .}}<td>{{.}}</td>{{end}}</tr>{{end}}
</tbody></table>{{else}}<p class="missing">No scenarios listed.</p>{{end}}
</div>
<div>
<h3>Channels</h3>
{{if .Glance.Channels}}<table><thead><tr><th>channel</th><th>quantity</th><th>level</th><th>units</th></tr></thead><tbody>
{{range .Glance.Channels}}<tr>{{range .}}<td>{{.}}</td>{{end}}</tr>{{end}}
</tbody></table>{{else}}<p class="missing">No channels listed.</p>{{end}}
</div>
</div>
<h3>Stage graph</h3>
{{if .Glance.Graph}}<figure class="wide">{{.Glance.Graph}}
<figcaption>Each box is a stage; the bar shows its instances by state:
{{range .StateLegend}}<span class="chip" style="background:{{.Color}}">{{.State}}</span>{{end}}</figcaption></figure>
<table><thead><tr><th>stage</th><th>kind</th><th>fan-out</th><th>reads</th><th>instances</th><th>time</th></tr></thead><tbody>
{{range .Glance.Stages}}<tr><td><b>{{.Name}}</b></td><td>{{.Kind}}</td><td>{{.Fan}}</td><td>{{.Inputs}}</td><td>{{range .Chips}}<span class="chip" style="background:{{.Color}}">{{.Count}} {{.State}}</span>{{end}}</td><td class="n">{{.Time}}</td></tr>{{end}}
</tbody></table>
{{else}}<p class="missing">No stages listed.</p>{{end}}
{{if .Glance.Failures}}<h3>Failed or blocked instances</h3>
<table><thead><tr><th>stage</th><th>scenario</th><th>block</th><th>member</th><th>state</th><th>time</th><th>reason</th></tr></thead><tbody>
{{range .Glance.Failures}}<tr>{{range .}}<td>{{.}}</td>{{end}}</tr>{{end}}
</tbody></table>{{end}}
{{if .Glance.Instances}}<details><summary>Every instance ({{len .Glance.Instances}})</summary>
<div class="scroll"><table><thead><tr><th>stage</th><th>scenario</th><th>block</th><th>member</th><th>state</th><th>time</th><th>why</th></tr></thead><tbody>
{{range .Glance.Instances}}<tr>{{range .}}<td>{{.}}</td>{{end}}</tr>{{end}}
</tbody></table></div></details>{{end}}
</section>

{{define "section"}}
{{if .Missing}}<p class="missing">{{.Missing}}</p>{{else}}
{{with .Intro}}<p class="intro">{{.}}</p>{{end}}
{{if .Figures}}<div class="figs">{{range .Figures}}<figure>{{.SVG}}<figcaption>{{.Caption}}</figcaption></figure>{{end}}</div>{{end}}
{{range .Tables}}{{template "table" .}}{{end}}
{{range .More}}<details><summary>{{.Title}} ({{len .Rows}} rows)</summary>{{template "table" .}}</details>{{end}}
{{end}}
{{if .Notes}}<ul class="notes">{{range .Notes}}<li>{{.}}</li>{{end}}</ul>{{end}}
{{end}}
{{define "table"}}<h3>{{.Title}}</h3>{{with .Note}}<p class="tnote">{{.}}</p>{{end}}
{{if .Rows}}<div class="scroll"><table><thead><tr>{{range .Columns}}<th>{{.}}</th>{{end}}</tr></thead><tbody>
{{range .Rows}}<tr>{{range .}}<td>{{.}}</td>{{end}}</tr>{{end}}
</tbody></table></div>{{else}}<p class="missing">No rows.</p>{{end}}{{end}}

<section class="card" id="labels"><h2><span class="num">2</span>Labels</h2>{{template "section" .Labels}}</section>
<section class="card" id="evaluation"><h2><span class="num">3</span>Evaluation</h2>{{template "section" .Eval}}</section>
<section class="card" id="events"><h2><span class="num">4</span>Events</h2>{{template "section" .Events}}</section>
<section class="card" id="maps"><h2><span class="num">5</span>Event density maps</h2>{{template "section" .Maps}}</section>
<section class="card" id="trends"><h2><span class="num">6</span>Trends</h2>{{template "section" .Trends}}</section>

<section class="card" id="record"><h2><span class="num">7</span>Reproducibility record</h2>
{{if .Record}}<p class="intro">Resolved settings, tool version and the digest of every input and output. Rerun the campaign and compare records to reproduce any table above.</p>
<details><summary>Show the record</summary><pre class="record">{{.Record}}</pre></details>
{{else}}<p class="missing">No reproducibility record was handed to the report.</p>{{end}}
</section>
<footer>Written by {{if .In.Tool}}{{.In.Tool}}{{else}}squall{{end}}. Plots drawn with gonum/plot. This page needs no network access. {{.Caution}}</footer>
</main>
</body>
</html>
`))
