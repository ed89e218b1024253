package report

// pageHTML is the report page. Layout choices: one column of at most 62em
// for reading, tables with right-aligned tabular figures, the verdict first,
// colour never the only carrier of a result (PASS and FAIL are written out),
// and print rules that keep each figure on one page and start each held-out
// photo on a new one.
const pageHTML = `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="{{.R.Program.Name}} {{.R.Program.Version}}">
<title>{{.R.Title}}</title>
<style>
:root { --ink: #1d232a; --muted: #5b6670; --rule: #d5dae0; --band: #f3f5f7; --pass: #1f6f43; --fail: #a32a2a; --accent: #2f5d8a; }
* { box-sizing: border-box; }
html { font-size: 15px; }
body { margin: 0; color: var(--ink); background: #fff; font-family: "DejaVu Sans", "Helvetica Neue", Arial, sans-serif; line-height: 1.45; }
main { max-width: 64em; margin: 0 auto; padding: 0 1.5em 3em; }
header.top { background: var(--band); border-bottom: 1px solid var(--rule); }
header.top .inner { max-width: 64em; margin: 0 auto; padding: 1.4em 1.5em 1.1em; }
h1 { font-size: 1.75rem; margin: 0 0 .25em; font-weight: 600; letter-spacing: -.01em; }
h2 { font-size: 1.3rem; margin: 2.2em 0 .6em; padding-bottom: .25em; border-bottom: 2px solid var(--ink); font-weight: 600; }
h3 { font-size: 1.1rem; margin: 1.8em 0 .5em; font-weight: 600; }
p { margin: .5em 0; }
.sub { color: var(--muted); margin: 0; }
.verdict { display: flex; gap: 1em; align-items: center; margin: 1.4em 0 .8em; padding: 1em 1.2em; border: 2px solid; border-radius: 6px; }
.verdict.pass { border-color: var(--pass); background: #eef7f1; }
.verdict.fail { border-color: var(--fail); background: #fbefef; }
.badge { display: inline-block; font-weight: 700; letter-spacing: .06em; padding: .15em .55em; border-radius: 4px; color: #fff; font-size: .9em; }
.badge.pass { background: var(--pass); }
.badge.fail { background: var(--fail); }
.verdict .badge { font-size: 1.4rem; padding: .3em .7em; }
.verdict p { margin: 0; }
nav.toc { margin: .8em 0 0; font-size: .92em; }
nav.toc a { color: var(--accent); text-decoration: none; margin-right: 1.1em; }
table { border-collapse: collapse; width: 100%; margin: .6em 0 1em; font-size: .92em; }
th, td { text-align: left; padding: .35em .55em; border-bottom: 1px solid var(--rule); vertical-align: top; }
th { background: var(--band); font-weight: 600; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
table.facts th { width: 14em; background: none; color: var(--muted); font-weight: normal; }
.swatch { display: inline-block; width: 1.3em; height: 1.3em; border: 1px solid #888; border-radius: 3px; vertical-align: -.25em; margin-right: .4em; }
figure { margin: 1em 0 1.4em; page-break-inside: avoid; break-inside: avoid; }
figure img { display: block; max-width: 100%; height: auto; border: 1px solid var(--rule); }
figure img.px { image-rendering: pixelated; }
figcaption { font-size: .86em; color: var(--muted); margin-top: .35em; }
.sim { font-weight: 700; color: var(--ink); letter-spacing: .04em; }
.pair { display: grid; grid-template-columns: 1fr 1fr; gap: 1.2em; }
.pair figure img { width: 100%; }
.note { border-left: 4px solid var(--accent); background: var(--band); padding: .6em .9em; margin: .8em 0; font-size: .92em; }
.warn { border-left-color: #b7791f; }
ul.warnings { margin: .3em 0 .8em 1.2em; padding: 0; font-size: .9em; }
code, .hash { font-family: "DejaVu Sans Mono", Consolas, monospace; font-size: .86em; }
.hash { word-break: break-all; }
.muted { color: var(--muted); }
footer { margin-top: 3em; padding-top: .8em; border-top: 1px solid var(--rule); color: var(--muted); font-size: .85em; }
section.holdout { page-break-before: auto; }
@media print {
  html { font-size: 10.5pt; }
  header.top { background: none; border-bottom: 2px solid #000; }
  nav.toc { display: none; }
  main { max-width: none; padding: 0; }
  section.holdout { page-break-before: always; break-before: page; }
  h2, h3 { page-break-after: avoid; break-after: avoid; }
  tr { page-break-inside: avoid; break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
@media (max-width: 50em) { .pair { grid-template-columns: 1fr; } }
</style>
</head>
<body>
{{$r := .R}}
<header class="top"><div class="inner">
<h1>{{$r.Title}}</h1>
<p class="sub">Proof of the fitted materials against photographs the fit never saw &middot; made {{$r.Created}} by {{$r.Program.Name}} {{$r.Program.Version}}</p>
<nav class="toc"><a href="#verdict">Verdict</a><a href="#capture">Capture</a><a href="#materials">Materials</a><a href="#fit">Fit</a><a href="#holdouts">Held-out photos</a><a href="#method">Method</a><a href="#provenance">Provenance</a></nav>
</div></header>
<main>

<section id="verdict">
<div class="verdict {{if $r.Summary.Pass}}pass{{else}}fail{{end}}">
<span class="badge {{if $r.Summary.Pass}}pass{{else}}fail{{end}}">{{verdictWord $r.Summary.Pass}}</span>
<div>
<p><strong>{{$r.Summary.Passed}} of {{$r.Summary.Holdouts}} {{agree $r.Summary.Passed $r.Summary.Holdouts}} with the simulation</strong> within the tolerance <strong>{{$r.Tolerance.Name}}</strong>{{if $r.Tolerance.MeanMax}}: mean &Delta;E00 {{cmp $r.Tolerance}} {{f 1 $r.Tolerance.MeanMax}}{{end}}{{if $r.Tolerance.P95Max}}, 95th percentile {{cmp $r.Tolerance}} {{f 1 $r.Tolerance.P95Max}}{{end}}{{if $r.Tolerance.MaxMax}}, maximum {{cmp $r.Tolerance}} {{f 1 $r.Tolerance.MaxMax}}{{end}}.</p>
<p class="muted">Tolerance source: {{$r.Tolerance.Source}}</p>
</div>
</div>
<p>Each photograph below was held out of the fit. Patina rendered the same view &mdash; the photo's calibrated camera, its lights, the fitted materials &mdash; and compared the <em>simulation</em> with the photograph pixel by pixel where the object is seen. &Delta;E00 is the CIEDE2000 colour difference; about 1 is one just-noticeable difference.</p>
<table>
<tr><th>#</th><th>held-out photo</th><th class="n">pixels</th><th class="n">mean &Delta;E00</th><th class="n">median</th><th class="n">95th pct.</th><th class="n">max</th><th class="n">PSNR (sRGB)</th><th class="n">SSIM</th><th>verdict</th></tr>
{{range $i, $h := $r.Holdouts}}<tr><td>{{inc $i}}</td><td><a href="#holdout-{{inc $i}}">{{$h.File}}</a></td><td class="n">{{$h.Metrics.Pixels}}</td><td class="n">{{f 2 $h.Metrics.DE2000Mean}}</td><td class="n">{{f 2 $h.Metrics.DE2000Median}}</td><td class="n">{{f 2 $h.Metrics.DE2000P95}}</td><td class="n">{{f 2 $h.Metrics.DE2000Max}}</td><td class="n">{{db $h.Metrics.PSNRSRGB}}</td><td class="n">{{f 4 $h.Metrics.SSIM}}</td><td><span class="badge {{if $h.Verdict.Pass}}pass{{else}}fail{{end}}">{{verdictWord $h.Verdict.Pass}}</span></td></tr>
{{end}}</table>
{{figure $r "chart-holdouts.png"}}
</section>

<section id="capture">
<h2>Capture</h2>
<table class="facts">
<tr><th>name</th><td>{{$r.Capture.Name}}</td></tr>
<tr><th>capture file</th><td><code>{{$r.Capture.Path}}</code></td></tr>
<tr><th>mesh</th><td><code>{{$r.Capture.Mesh}}</code>: {{$r.Capture.Triangles}} triangles, {{$r.Capture.Vertices}} vertices; up axis {{$r.Capture.Up}}; units metres</td></tr>
<tr><th>cameras</th><td>{{range $i, $c := $r.Capture.Cameras}}{{if $i}}, {{end}}{{$c.ID}} ({{$c.Width}}&times;{{$c.Height}}){{end}}</td></tr>
<tr><th>lights</th><td>{{$r.Capture.Lights}}</td></tr>
<tr><th>photos</th><td>{{use $r "fit"}} for fitting, {{use $r "holdout"}} held out, {{use $r "ignore"}} ignored</td></tr>
</table>
<table>
<tr><th>segment</th><th>model</th><th class="n">triangles</th><th>reference albedo</th></tr>
{{range $r.Capture.Segments}}<tr><td>{{.Name}}</td><td>{{.Model}}</td><td class="n">{{.Triangles}}</td><td>{{if .ReferenceAlbedo}}{{rgb (deref .ReferenceAlbedo)}} (calibration target){{else}}<span class="muted">&ndash;</span>{{end}}</td></tr>
{{end}}</table>
{{if $r.Capture.Warnings}}<div class="note warn"><strong>Warnings of the capture check</strong><ul class="warnings">{{range $r.Capture.Warnings}}<li>{{.String}}</li>{{end}}</ul></div>{{end}}
</section>

<section id="materials">
<h2>Materials</h2>
<p>Fitted parameters per segment with one standard deviation where the fit could estimate it. Diffuse is the Lambertian albedo and F0 the reflectance at normal incidence, both linear RGB; roughness is perceptual (GGX width &alpha; = r&sup2;, the glTF 2.0 convention). The swatch shows the albedo (for a metal, F0) in sRGB.</p>
<table>
<tr><th>segment</th><th>model</th><th>diffuse albedo (R, G, B)</th><th>F0</th><th>roughness</th><th class="n">observations</th><th class="n">near-specular</th><th class="n">RMS residual</th></tr>
{{range $r.Materials.Segments}}<tr><td><span class="swatch" style="{{swatch .}}"></span>{{.Name}}</td><td>{{.Model}}</td>
<td>{{if eq .Model "metal"}}<span class="muted">none (metal)</span>{{else}}{{rgbpm .Diffuse .Sigma true}}{{end}}</td>
<td>{{if eq .Model "dielectric"}}{{if .Sigma}}{{pm (index .Specular 0) (index .Sigma.Specular 0) true}}{{else}}{{f 3 (index .Specular 0)}}{{end}}{{else}}{{rgbpm .Specular .Sigma false}}{{end}}</td>
<td>{{if .Sigma}}{{pm .Roughness .Sigma.Roughness true}}{{else}}{{f 3 .Roughness}}{{end}}</td>
<td class="n">{{.Observations}}</td><td class="n">{{.NearSpecular}}</td><td class="n">{{if .RMSE}}{{sci (deref1 .RMSE)}}{{else}}not fitted{{end}}</td></tr>
{{if .Warnings}}<tr><td></td><td colspan="7"><ul class="warnings">{{range .Warnings}}<li>{{.}}</li>{{end}}</ul></td></tr>{{end}}
{{end}}</table>
</section>

<section id="fit">
<h2>Fit</h2>
{{with $r.Materials.Fit}}<table class="facts">
<tr><th>optimiser</th><td>{{.Optimizer}}</td></tr>
<tr><th>loss</th><td>{{.Loss}}</td></tr>
<tr><th>passes over the observations</th><td>{{.Passes}} (all segments)</td></tr>
<tr><th>fit time</th><td>{{f 1 .Seconds}} s</td></tr>
<tr><th>photos used</th><td>{{len .PhotosUsed}}</td></tr>
<tr><th>radiometric scale</th><td>{{printf "%.6g" .RadiometricScale}} (photo radiance = scale &times; the radiance the capture's lights predict; applied to every simulation here)</td></tr>
<tr><th>fit seed</th><td>{{.Seed}}</td></tr>
{{if or .PatinaVersion .Created}}<tr><th>written by</th><td>patina {{.PatinaVersion}} {{.Created}}</td></tr>{{end}}
</table>{{else}}<p class="note warn">The materials file has no fit record: it was not written by a fit, so there are no diagnostics to show.</p>{{end}}
<p class="note">{{$r.Materials.HistoryNote}}</p>
<div class="pair">
{{figure $r "chart-residuals.png"}}
{{figure $r "chart-rejections.png"}}
</div>
{{with $r.Materials.Fit}}{{if .Rejections}}<table style="width:auto"><tr><th>rejection reason</th><th class="n">pixels</th></tr>
{{range $k := rejkeys .Rejections}}<tr><td>{{$k}}</td><td class="n">{{index $.R.Materials.Fit.Rejections $k}}</td></tr>{{end}}</table>{{end}}{{end}}
</section>

<section id="holdouts">
<h2>Held-out photos</h2>
<p>In every picture below the middle panel and the maps come from a <span class="sim">SIMULATION</span>: a path-traced render, not a photograph. The photograph and the simulation are shown with the same exposure.</p>
{{range $i, $h := $r.Holdouts}}<section class="holdout" id="holdout-{{inc $i}}">
<h3>{{inc $i}}. {{$h.File}} &nbsp;<span class="badge {{if $h.Verdict.Pass}}pass{{else}}fail{{end}}">{{verdictWord $h.Verdict.Pass}}</span></h3>
<p class="muted">Camera {{$h.Camera}}, lights {{join $h.Lights ", "}}, {{$h.Width}}&times;{{$h.Height}} pixels; simulation at {{if $h.Sampling.Adaptive}}{{f 1 $h.Sampling.MeanSPP}} samples per pixel on average ({{$h.Sampling.PixelMinSPP}} to {{$h.Sampling.SPP}}: a pixel stops early once its own noise is below the target){{else}}{{$h.Sampling.SPP}} samples per pixel{{end}}{{if $h.Sampling.Automatic}} (chosen by the noise rule){{end}}, seed {{$h.Seed}}, at most {{$h.MaxDepth}} bounces; rendered in {{f 1 $h.RenderSeconds}} s.</p>
{{figure $r (printf "holdout-%d-strip.png" (inc $i))}}
{{figure $r (printf "holdout-%d-deltal.png" (inc $i))}}
<p><strong>{{$h.Verdict.Text}}</strong></p>
<table>
<tr><th>pixels compared</th><th class="n">count</th><th class="n">mean &Delta;E00</th><th class="n">median</th><th class="n">95th pct.</th><th class="n">max</th><th class="n">PSNR linear</th><th class="n">PSNR sRGB</th><th class="n">SSIM</th><th>verdict</th></tr>
<tr><td><strong>whole view</strong></td><td class="n">{{$h.Metrics.Pixels}}</td><td class="n">{{f 2 $h.Metrics.DE2000Mean}}</td><td class="n">{{f 2 $h.Metrics.DE2000Median}}</td><td class="n">{{f 2 $h.Metrics.DE2000P95}}</td><td class="n">{{f 2 $h.Metrics.DE2000Max}}</td><td class="n">{{db $h.Metrics.PSNRLinear}}</td><td class="n">{{db $h.Metrics.PSNRSRGB}}</td><td class="n">{{f 4 $h.Metrics.SSIM}}</td><td><span class="badge {{if $h.Verdict.Pass}}pass{{else}}fail{{end}}">{{verdictWord $h.Verdict.Pass}}</span></td></tr>
{{range $h.Metrics.Segments}}<tr><td>{{.Name}}</td><td class="n">{{.Pixels}}</td><td class="n">{{f 2 .DE2000Mean}}</td><td class="n">{{f 2 .DE2000Median}}</td><td class="n">{{f 2 .DE2000P95}}</td><td class="n">{{f 2 .DE2000Max}}</td><td class="n">{{db .PSNRLinear}}</td><td class="n">{{db .PSNRSRGB}}</td><td class="n">{{f 4 .SSIM}}</td><td>{{with seg $h .Index}}<span class="badge {{if .Pass}}pass{{else}}fail{{end}}">{{verdictWord .Pass}}</span>{{end}}</td></tr>
{{end}}</table>
<p class="muted">Noise: photograph &sigma; &asymp; {{sci $h.Sampling.PhotoNoise}}, simulation standard error &asymp; {{sci $h.Sampling.RenderNoise}} on the typical pixel{{if $h.Sampling.Automatic}}, from a pilot of {{$h.Sampling.PilotReplicates}} independent renders of {{$h.Sampling.PilotSPP}} samples of {{$h.Sampling.PilotPixels}} of its pixels (the spread of each pixel's means, scaled to the samples the pixel got){{end}} (ratio {{ratio $h.Sampling}}, target {{f 2 $h.Sampling.Target}}; root mean square over {{if $h.Sampling.Automatic}}those{{else}}all{{end}} pixels {{sci $h.Sampling.RenderNoiseRMS}}, dominated by rare bright paths of indirect light){{if gt $h.Sampling.IndirectClamp 0.0}}; each sample's light of two or more scatterings is clamped at {{sci $h.Sampling.IndirectClamp}} (capture radiance), trading a little caustic light for freedom from specks{{end}}{{if $h.Sampling.Capped}}; <strong>the noise rule wanted {{$h.Sampling.WantedSPP}} samples per pixel but was capped at {{$h.Sampling.SPP}}</strong>{{end}}. Linear white for the metrics: {{sci $h.Metrics.Peak}}.</p>
</section>
{{end}}
</section>

<section id="method">
<h2>Method</h2>
<table class="facts">
<tr><th>compared pixels</th><td>{{$r.Settings.Pixels}}</td></tr>
<tr><th>light transport</th><td>{{$r.Settings.Light}}</td></tr>
<tr><th>samples per pixel</th><td>{{$r.Settings.SPPRule}}</td></tr>
<tr><th>scale</th><td>{{$r.Settings.Peak}}</td></tr>
<tr><th>PSNR</th><td>10 log10(1 / MSE) over the compared pixels and three channels, on linear values divided by the white, and on their sRGB encoding (IEC 61966-2-1) clipped to [0, 1]</td></tr>
<tr><th>SSIM</th><td>Wang, Bovik, Sheikh and Simoncelli (2004): 11&times;11 Gaussian window, &sigma; 1.5, K1 0.01, K2 0.03, on the sRGB-encoded luminance, window statistics over compared pixels only</td></tr>
<tr><th>&Delta;E00</th><td>CIEDE2000 (CIE 142-2001; Sharma, Wu and Dalal 2005) per pixel in CIELAB, D65, 2&deg; observer, kL = kC = kH = 1</td></tr>
<tr><th>seeds</th><td>base seed {{$r.Settings.Seed}}; {{$r.Settings.SeedRule}}</td></tr>
</table>
</section>

<section id="provenance">
<h2>Provenance</h2>
<table class="facts">
<tr><th>program</th><td>{{$r.Program.Name}} {{$r.Program.Version}}, revision <code>{{$r.Program.Revision}}</code>, {{$r.Program.GoVersion}}, {{$r.Program.Platform}}</td></tr>
<tr><th>command line</th><td><code>{{join $r.CommandLine " "}}</code></td></tr>
<tr><th>made</th><td>{{$r.Created}} (UTC), in {{f 1 $r.Seconds}} s</td></tr>
<tr><th>render seeds</th><td>{{range $i, $h := $r.Holdouts}}{{if $i}}, {{end}}{{$h.File}}: {{$h.Seed}}{{end}}</td></tr>
<tr><th>settings</th><td>samples per pixel {{if $r.Settings.SPP}}{{$r.Settings.SPP}}{{else}}automatic (cap {{$r.Settings.MaxSPP}}, noise ratio {{f 2 $r.Settings.NoiseRatio}}){{end}}; maximum depth {{$r.Settings.MaxDepth}}; tolerance {{$r.Tolerance.Name}}</td></tr>
<tr><th>companion files</th><td><code>{{.JSONName}}</code> holds the same facts for archives and scripts, and this page's SHA-256; <code>{{.SumsName}}</code> lists the SHA-256 of this page and of <code>{{.JSONName}}</code> (check with <code>sha256sum -c {{.SumsName}}</code>). A file cannot contain its own hash.</td></tr>
</table>
<h3>Input files (SHA-256)</h3>
<table>
<tr><th>role</th><th>file</th><th class="n">bytes</th><th>SHA-256</th></tr>
{{range $r.Inputs}}<tr><td>{{.Role}}</td><td><code>{{.Path}}</code></td><td class="n">{{.Bytes}}</td><td class="hash">{{.SHA256}}</td></tr>
{{end}}</table>
<h3>Pictures embedded in this page (SHA-256 of each PNG)</h3>
<table>
<tr><th>picture</th><th>shows a simulation</th><th class="n">bytes</th><th>SHA-256</th></tr>
{{range $r.Images}}<tr><td><code>{{.Name}}</code></td><td>{{if .Simulation}}yes{{else}}no{{end}}</td><td class="n">{{.Bytes}}</td><td class="hash">{{.SHA256}}</td></tr>
{{end}}</table>
</section>
<footer>Made by {{$r.Program.Name}} {{$r.Program.Version}} (revision {{$r.Program.Revision}}) on {{$r.Created}}. Rendered pictures are simulations computed from the fitted materials, not photographs.</footer>
</main>
</body>
</html>
`
