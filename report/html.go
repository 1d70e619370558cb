package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"os"
	"path/filepath"

	"chord/internal/atomicfile"
)

// report.html: one self-contained page (the plots embedded as data URLs,
// the style inline, no script and no fetch of anything) with the run's
// configuration, convergence, summary table, plots, warnings, cautions and
// inputs with their digests.

// RunDetails is what report.html shows besides the summary.
type RunDetails struct {
	Title  string  // the planet's name
	Config string  // run.toml, the resolved configuration
	Inputs []Input // the run's input files
}

// Input is one input file of a run with its SHA-256.
type Input struct {
	Role, Path, SHA256 string
}

// plotCaptions say what each plot shows and how to read it.
var plotCaptions = map[string]string{
	"spectrum":    "The data (each data set in its own colour, after its fitted offset, with inflated errors where an inflation was fitted), the median model of 300 posterior samples with its 1 and 2 sigma bands, and the truth when known. Below: each bin's residual from the median model in units of its error.",
	"temperature": "The retrieved temperature profile: the median and the 1 and 2 sigma bands of the posterior samples' temperatures at each pressure, pressure increasing downward, and the truth when known.",
	"gases":       "What each gas does: the best fit, and the best fit with each gas removed in turn. Where a curve drops below the best fit, that gas makes the feature.",
	"traces":      "The log posterior and each parameter against step for a few walkers. The shaded start is the burn-in, dropped from the summary. Walkers that wander together over the same range have mixed.",
	"corner":      "Each parameter's posterior (diagonal, with its median and 68% interval above) and each pair's joint posterior with its 1 and 2 sigma contours; the truth in red when known.",
}

type htmlPlot struct {
	Name, Caption string
	Src           template.URL
}

// htmlCaution is a caution; Note marks the milder chemistry note.
type htmlCaution struct {
	Text string
	Note bool
}

type htmlPage struct {
	Title, Program, RunID string
	Demo                  bool
	DemoWarning           string
	Overview              [][2]string
	Convention            string
	Params, Derived       []tableRow
	Notes                 []string
	Warnings              []string
	Cautions              []htmlCaution
	Plots                 []htmlPlot
	Config                string
	Inputs                []Input
	Converged             bool
	Nested                bool // nested sampling: the evidence instead of the chain's convergence
}

// WriteHTML writes dir/report.html from the summary s, the run details d
// and the plots already written in dir (a missing plot is left out).
func WriteHTML(dir string, s *Summary, d *RunDetails) error {
	fn := &footnotes{}
	page := htmlPage{
		Title: d.Title, Program: s.Program, RunID: s.RunID, Demo: s.DemoOpacities, DemoWarning: DemoWarning,
		Overview: s.overview(), Convention: IntervalConvention,
		Params: rows(s.Parameters, fn), Derived: rows(s.Derived, fn),
		Warnings: s.warningsWithoutBanner(),
		Config:   d.Config, Inputs: d.Inputs, Converged: s.Converged, Nested: s.Evidence != nil,
	}
	page.Notes = fn.text
	for _, c := range s.Cautions {
		page.Cautions = append(page.Cautions, htmlCaution{Text: c, Note: c == MethaneChemistryNote})
	}
	for _, name := range PlotNames {
		b, err := os.ReadFile(filepath.Join(dir, name+".png"))
		if os.IsNotExist(err) {
			continue
		}
		if err != nil {
			return err
		}
		page.Plots = append(page.Plots, htmlPlot{Name: name, Caption: plotCaptions[name],
			Src: template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(b))})
	}
	var buf bytes.Buffer
	if err := htmlTemplate.Execute(&buf, page); err != nil {
		return fmt.Errorf("report.html: %w", err)
	}
	return atomicfile.Write(filepath.Join(dir, HTMLFile), buf.Bytes(), true)
}

var htmlTemplate = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>chord report{{if .Title}}: {{.Title}}{{end}}</title>
<style>
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #1c1c1c; background: #fbfaf7; margin: 0; line-height: 1.45; }
header { background: #243447; color: #f3f1ea; padding: 1.2em 2em; }
header h1 { margin: 0; font-size: 1.6em; font-weight: 600; }
header p { margin: 0.3em 0 0; color: #c9d3dd; font-size: 0.9em; }
nav { padding: 0.5em 2em; background: #e9e5dc; font-size: 0.9em; }
nav a { margin-right: 1.2em; color: #243447; }
main { max-width: 1100px; margin: 0 auto; padding: 0 2em 3em; }
section { margin-top: 2em; }
h2 { font-size: 1.2em; border-bottom: 2px solid #d8d2c4; padding-bottom: 0.2em; color: #243447; }
.banner { background: #fff1d6; border-left: 6px solid #d08a00; padding: 0.8em 1em; margin-top: 1.5em; font-weight: 600; }
.caution { background: #fde9e6; border-left: 6px solid #b3261e; padding: 0.8em 1em; margin: 0.8em 0; }
.note { background: #e6f0f7; border-left: 6px solid #2f6d96; padding: 0.8em 1em; margin: 0.8em 0; }
.warning { background: #fff8e1; border-left: 4px solid #c49000; padding: 0.4em 0.8em; margin: 0.4em 0; }
.ok { color: #1e6b36; font-weight: 600; } .notok { color: #b3261e; font-weight: 600; }
table { border-collapse: collapse; font-size: 0.88em; margin: 0.6em 0; }
th, td { padding: 0.25em 0.7em; border-bottom: 1px solid #e2ddd2; text-align: left; vertical-align: top; }
th { background: #efebe2; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.mono, pre { font-family: "DejaVu Sans Mono", "Liberation Mono", monospace; }
tr.detected td.verdict { color: #1e6b36; font-weight: 600; }
tr.limit td.verdict { color: #555; }
dl.overview { display: grid; grid-template-columns: max-content 1fr; gap: 0.2em 1.2em; }
dl.overview dt { font-weight: 600; } dl.overview dd { margin: 0; }
figure { margin: 1.2em 0; background: #fff; padding: 0.8em; border: 1px solid #e2ddd2; }
figure img { max-width: 100%; height: auto; display: block; margin: 0 auto; }
figcaption { font-size: 0.88em; color: #444; margin-top: 0.5em; }
pre { background: #f3f0e8; padding: 0.8em; overflow-x: auto; font-size: 0.8em; }
.notes li { font-size: 0.88em; }
</style>
</head>
<body>
<header>
<h1>{{if .Title}}{{.Title}}: {{end}}retrieval report</h1>
<p>{{.Program}}{{if .RunID}} · run {{.RunID}}{{end}}</p>
</header>
<nav><a href="#summary">Summary</a><a href="#convergence">Convergence</a><a href="#plots">Plots</a><a href="#warnings">Warnings</a><a href="#inputs">Inputs</a><a href="#configuration">Configuration</a></nav>
<main>
{{if .Demo}}<div class="banner">{{.DemoWarning}}</div>{{end}}
{{range .Cautions}}<div class="{{if .Note}}note{{else}}caution{{end}}">{{.Text}}</div>{{end}}
<section id="summary">
<h2>Summary</h2>
<p>Parameters: {{.Convention}}.</p>
<table>
<tr><th>parameter</th><th>unit</th><th>median</th><th>68% interval</th><th>95% interval</th><th>prior</th><th>verdict</th></tr>
{{range .Params}}<tr class="{{if .Detected}}detected{{else if .UpperLimit}}limit{{end}}"><td class="mono">{{.Name}}</td><td>{{.Unit}}</td><td class="num">{{.Median}}</td><td class="num">{{.Lo68}} {{.Hi68}}</td><td class="num">{{.Lo95}} {{.Hi95}}</td><td class="mono">{{.Prior}}</td><td class="verdict">{{.Verdict}}</td></tr>
{{end}}</table>
{{if .Derived}}<p>Derived quantities:</p>
<table>
<tr><th>quantity</th><th>unit</th><th>median</th><th>68% interval</th><th>95% interval</th></tr>
{{range .Derived}}<tr><td class="mono">{{.Name}}</td><td>{{.Unit}}</td><td class="num">{{.Median}}</td><td class="num">{{.Lo68}} {{.Hi68}}</td><td class="num">{{.Lo95}} {{.Hi95}}</td></tr>
{{end}}</table>{{end}}
{{if .Notes}}<ol class="notes">{{range .Notes}}<li>{{.}}</li>{{end}}</ol>{{end}}
</section>
<section id="convergence">
{{if .Nested}}<h2>Evidence</h2>
<p>{{if .Converged}}<span class="ok">Finished</span>: the live points could change ln Z by less than the evidence tolerance.{{else}}<span class="notok">Not finished</span>: ln Z and the intervals are not final; resume the run.{{end}}</p>
<dl class="overview">{{range .Overview}}<dt>{{index . 0}}</dt><dd>{{index . 1}}</dd>{{end}}</dl>
{{else}}<h2>Convergence</h2>
<p>{{if .Converged}}<span class="ok">Converged</span>: the chain is longer than 50 autocorrelation times.{{else}}<span class="notok">Not converged</span>: the intervals are not final; resume the run.{{end}}</p>
<dl class="overview">{{range .Overview}}<dt>{{index . 0}}</dt><dd>{{index . 1}}</dd>{{end}}</dl>
<table>
<tr><th>parameter</th><th>max-posterior</th><th>tau (steps)</th><th>ESS</th><th>R-hat</th></tr>
{{range .Params}}<tr><td class="mono">{{.Name}}</td><td class="num">{{.MaxPost}}</td><td class="num">{{.Tau}}</td><td class="num">{{.ESS}}</td><td class="num">{{.RHat}}</td></tr>
{{end}}</table>{{end}}
</section>
<section id="plots">
<h2>Plots</h2>
{{range .Plots}}<figure id="plot-{{.Name}}"><img src="{{.Src}}" alt="{{.Name}} plot"><figcaption><b>{{.Name}}</b>: {{.Caption}}</figcaption></figure>
{{end}}</section>
<section id="warnings">
<h2>Warnings and cautions</h2>
{{if or .Warnings .Cautions}}{{range .Warnings}}<div class="warning">{{.}}</div>{{end}}{{range .Cautions}}<div class="{{if .Note}}note{{else}}caution{{end}}">{{.Text}}</div>{{end}}{{else}}<p>None.</p>{{end}}
</section>
<section id="inputs">
<h2>Inputs</h2>
<table>
<tr><th>role</th><th>file</th><th>SHA-256</th></tr>
{{range .Inputs}}<tr><td>{{.Role}}</td><td class="mono">{{.Path}}</td><td class="mono">{{.SHA256}}</td></tr>
{{end}}</table>
</section>
<section id="configuration">
<h2>Configuration (run.toml)</h2>
<pre>{{.Config}}</pre>
</section>
</main>
</body>
</html>
`))
