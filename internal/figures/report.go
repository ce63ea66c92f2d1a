package figures

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"io"
	"math"
	"sort"
	"strings"

	"github.com/filigree-survey/filigree/survey"
)

// ReportOptions are the extras of a report beyond its Inputs.
type ReportOptions struct {
	// Generator names the program that wrote the report (e.g.
	// "filigree v1.2"), printed at the foot; "" prints nothing.
	Generator string
	// Notes are lines shown under the cautions (e.g. which optional inputs
	// were not given).
	Notes []string
	// Plot are the options of the wedge and slice figures.
	Plot Options
}

// WriteReport writes the HTML report of a run to w: one self-contained
// page (every figure a PNG in a data: URI, the style sheet inline, no
// script, no reference to anything outside the file) with the run's
// parameters and provenance, the cautions that come with web labels (their
// dependence on smoothing, threshold and tracer density, and the edge
// flags with their counts), the summary numbers (class fractions, counts,
// step times) and every figure that the inputs allow (see Applicable). A
// figure that fails is replaced by a note with its error, so that a report
// is still written; only a failure to write returns an error. The page is
// also well-formed XML (XHTML syntax), so any XML parser can read it.
func WriteReport(w io.Writer, in Inputs, opt ReportOptions) error {
	if in.Table == nil {
		return fmt.Errorf("report: no table")
	}
	d := reportData{Title: in.title(), ScaleNote: in.scaleNote(), Generator: opt.Generator, Notes: opt.Notes}
	t := in.Table
	d.Rows = t.Len()
	// Provenance.
	if p, ok, err := survey.ProvenanceFromMeta(t.Meta); ok && err == nil {
		d.HasProv = true
		d.Version = p.Version
		d.Command = survey.ShellQuote(p.Command)
		if !p.Time.IsZero() {
			d.Time = p.Time.UTC().Format("2006-01-02 15:04:05 UTC")
		}
		d.Params = p.Params
		d.Cosmology = p.Cosmology
		for _, f := range p.Inputs {
			rows := "–"
			if f.Rows >= 0 {
				rows = fmt.Sprint(f.Rows)
			}
			d.Inputs = append(d.Inputs, inputRow{Path: f.Path, Rows: rows, SHA256: f.SHA256})
		}
	}
	// Cautions.
	r, th := in.runScales()
	d.Cautions = append(d.Cautions, fmt.Sprintf("The web labels are not a property of the galaxies alone: they depend on the smoothing scale (R = %s), "+
		"on the eigenvalue threshold (λ_th = %s) and on the density of the tracers (sparser samples wash small filaments out). "+
		"Compare classes only between runs made with the same R, λ_th and tracer density.", fmtNum(r, "Mpc/h"), fmtNum(th, "")))
	if c, ok := t.Meta.Get("filigree.caution"); ok {
		d.Cautions = append(d.Cautions, "The run recorded: "+c+".")
	}
	d.Cautions = append(d.Cautions, "Galaxies near the survey's edges and holes see a density field cut by the boundary; "+
		"they are flagged (bit 1) and should not be trusted like interior galaxies.")
	// Flags, with their meaning from the table's metadata.
	if fl := t.ColFold("flags"); fl != nil {
		desc := map[int]string{}
		if s, ok := t.Meta.Get("filigree.flags"); ok {
			for _, part := range strings.Split(s, "; ") {
				var bit int
				if _, err := fmt.Sscanf(part, "%d=", &bit); err == nil {
					desc[bit] = strings.TrimSpace(part[strings.Index(part, "=")+1:])
				}
			}
		}
		var counts [32]int
		for i := 0; i < fl.Len(); i++ {
			v, ok := fl.Float(i)
			if !ok {
				continue
			}
			u := uint32(v)
			for b := 0; b < 32; b++ {
				if u>>b&1 == 1 {
					counts[b]++
				}
			}
		}
		for b := 0; b < 32; b++ {
			if counts[b] == 0 && desc[1<<b] == "" {
				continue
			}
			dsc := desc[1<<b]
			if dsc == "" {
				dsc = "(undocumented bit)"
			}
			d.Flags = append(d.Flags, flagRow{Bit: 1 << b, Desc: dsc, Count: counts[b], Percent: pct(counts[b], d.Rows)})
		}
	}
	// Counts per class.
	codes := classes(t)
	var per [5]int
	for _, c := range codes {
		if c < 0 {
			per[4]++
		} else {
			per[c]++
		}
	}
	vol, mass, src := fractions(in)
	d.FractionSource = src
	for c := 0; c < 4; c++ {
		row := classRow{Name: ClassLabel(c), Colour: hexColour(c), Galaxies: per[c], Percent: pct(per[c], d.Rows), Volume: "–", Mass: "–"}
		if vol != nil && !math.IsNaN(vol[c]) {
			row.Volume = fmt.Sprintf("%.4f", vol[c])
		}
		if mass != nil && !math.IsNaN(mass[c]) {
			row.Mass = fmt.Sprintf("%.4f", mass[c])
		}
		d.Classes = append(d.Classes, row)
	}
	d.Unlabelled = per[4]
	if s, ok := t.Meta.Get("filigree.web_codes"); ok {
		d.WebCodes = s
	}
	// Summary numbers and times.
	if s := in.Summary; s != nil {
		add := func(k, v string) { d.Numbers = append(d.Numbers, [2]string{k, v}) }
		add("smoothing R", fmtNum(s.Smooth, "Mpc/h")+" ("+s.SmoothChoice+")")
		add("threshold λ_th", fmtNum(s.Threshold, ""))
		add("mean galaxy separation", fmtNum(s.MeanSeparation, "Mpc/h"))
		add("grid", fmt.Sprintf("%d³ cells of %.4g Mpc/h", s.GridCells, s.GridCell))
		add("fill particles", fmt.Sprint(s.FillParticles))
		add("near an edge (flag 1)", fmt.Sprint(s.NearEdge))
		add("without a weight (flag 8)", fmt.Sprint(s.NoWeight))
		add("merged duplicates (flag 4)", fmt.Sprint(s.Duplicates))
		add("on the convex hull (flag 16)", fmt.Sprint(s.OnHull))
		add("total run time", fmt.Sprintf("%.1f s", s.Seconds))
		keys := make([]string, 0, len(s.StepSeconds))
		for k := range s.StepSeconds {
			keys = append(keys, k)
		}
		sort.Slice(keys, func(i, j int) bool { return s.StepSeconds[keys[i]] > s.StepSeconds[keys[j]] })
		for _, k := range keys {
			d.Steps = append(d.Steps, [2]string{k, fmt.Sprintf("%.2f s", s.StepSeconds[k])})
		}
	}
	// Figures.
	for _, k := range Kinds {
		fr := figureRow{Kind: k, Caption: captions[k]}
		f, err := Draw(k, in, opt.Plot)
		if err == nil {
			var b []byte
			b, err = f.Bytes("png")
			if err == nil {
				fr.Src = template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(b))
			}
		}
		if err != nil {
			fr.Error = err.Error()
		}
		d.Figures = append(d.Figures, fr)
	}
	var buf bytes.Buffer
	if err := reportTemplate.Execute(&buf, d); err != nil {
		return err
	}
	_, err := w.Write(buf.Bytes())
	return err
}

func fmtNum(v float64, unit string) string {
	if math.IsNaN(v) {
		return "unknown"
	}
	if unit == "" {
		return fmt.Sprintf("%.4g", v)
	}
	return fmt.Sprintf("%.4g %s", v, unit)
}

func pct(n, tot int) string {
	if tot == 0 {
		return "–"
	}
	return fmt.Sprintf("%.1f%%", 100*float64(n)/float64(tot))
}

func hexColour(c int) template.CSS {
	k := ClassColor(c)
	return template.CSS(fmt.Sprintf("#%02x%02x%02x", k.R, k.G, k.B))
}

var captions = map[string]string{
	"wedge":     "Cone diagram of a declination slab: right ascension against comoving distance, observer at the apex, galaxies coloured by web class over the smoothed density of the fields cube on the slab's central declination; grey is outside the survey, dark lines are its edges and holes.",
	"slice":     "A slab through the fields cube: the smoothed density log10(1+δ) averaged over the slab's grid planes, with the slab's galaxies coloured by web class.",
	"sky":       "The footprint's completeness and the galaxies on the sky, in the Mollweide equal-area projection (Snyder 1987).",
	"nz":        "Redshift distribution of the galaxies (histogram) and the run's fitted n(z), the smoothed estimate the weights were built from.",
	"fractions": "Volume fractions (solid) and mass fractions (hatched) of the four web classes.",
	"density":   "Distribution of the smoothed density contrast at the galaxies, for each web class, each normalised to unit area.",
}

type inputRow struct{ Path, Rows, SHA256 string }

type flagRow struct {
	Bit     int
	Desc    string
	Count   int
	Percent string
}

type classRow struct {
	Name         string
	Colour       template.CSS
	Galaxies     int
	Percent      string
	Volume, Mass string
}

type figureRow struct {
	Kind, Caption, Error string
	Src                  template.URL
}

type reportData struct {
	Title, ScaleNote, Generator string
	Notes, Cautions             []string
	Rows, Unlabelled            int
	HasProv                     bool
	Version, Command, Time      string
	Params, Cosmology           []survey.KeyValue
	Inputs                      []inputRow
	Flags                       []flagRow
	Classes                     []classRow
	FractionSource, WebCodes    string
	Numbers, Steps              [][2]string
	Figures                     []figureRow
}

// reportTemplate is XHTML-compatible HTML: every element closed, only the
// XML entities, so that an XML parser reads it as well as a browser.
var reportTemplate = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8"/>
<title>filigree report: {{.Title}}</title>
<style>
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; max-width: 1250px; margin: 1.5em auto; padding: 0 1em; color: #1b1b1b; line-height: 1.4; }
h1 { font-size: 1.6em; border-bottom: 2px solid #1d356b; padding-bottom: 0.2em; }
h2 { font-size: 1.25em; margin-top: 1.8em; color: #1d356b; }
table { border-collapse: collapse; margin: 0.5em 0 1em 0; font-size: 0.92em; }
th, td { border: 1px solid #c8c8c8; padding: 0.2em 0.6em; text-align: left; vertical-align: top; }
th { background: #eef2f2; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
code, .mono { font-family: "DejaVu Sans Mono", "Liberation Mono", monospace; font-size: 0.9em; word-break: break-all; }
.caution { background: #fff6dc; border-left: 5px solid #d97a2b; padding: 0.6em 1em; margin: 1em 0; }
.caution p { margin: 0.4em 0; }
.swatch { display: inline-block; width: 0.9em; height: 0.9em; border: 1px solid #333; margin-right: 0.4em; vertical-align: middle; }
figure { margin: 1.5em 0; }
figure img { max-width: 100%; border: 1px solid #ddd; }
figcaption { font-size: 0.9em; color: #333; margin-top: 0.3em; }
.note { color: #555; font-size: 0.9em; }
</style>
</head>
<body>
<h1>filigree run report: {{.Title}}</h1>
<p><strong>{{.ScaleNote}}</strong> · {{.Rows}} galaxies{{if .Time}} · run at {{.Time}}{{end}}</p>

<h2>Cautions</h2>
<div class="caution">
{{range .Cautions}}<p>{{.}}</p>
{{end}}{{range .Notes}}<p class="note">{{.}}</p>
{{end}}</div>
{{if .Flags}}<table>
<tr><th>flag bit</th><th>meaning</th><th>galaxies</th><th>share</th></tr>
{{range .Flags}}<tr><td class="num">{{.Bit}}</td><td>{{.Desc}}</td><td class="num">{{.Count}}</td><td class="num">{{.Percent}}</td></tr>
{{end}}</table>{{end}}

<h2>Web classes</h2>
<table>
<tr><th>class (code)</th><th>galaxies</th><th>share of galaxies</th><th>volume fraction</th><th>mass fraction</th></tr>
{{range .Classes}}<tr><td><span class="swatch" style="background: {{.Colour}}"></span>{{.Name}}</td><td class="num">{{.Galaxies}}</td><td class="num">{{.Percent}}</td><td class="num">{{.Volume}}</td><td class="num">{{.Mass}}</td></tr>
{{end}}<tr><td>no label</td><td class="num">{{.Unlabelled}}</td><td></td><td></td><td></td></tr>
</table>
{{if .WebCodes}}<p class="note">Web codes: {{.WebCodes}}.</p>{{end}}
<p class="note">Fractions {{.FractionSource}}. Volume: share of the grid cells inside the survey; mass: weighted share of the labelled galaxies.</p>

{{if .Numbers}}<h2>Summary numbers</h2>
<table>
{{range .Numbers}}<tr><th>{{index . 0}}</th><td>{{index . 1}}</td></tr>
{{end}}</table>
{{if .Steps}}<table>
<tr><th>step</th><th>time</th></tr>
{{range .Steps}}<tr><td>{{index . 0}}</td><td class="num">{{index . 1}}</td></tr>
{{end}}</table>{{end}}{{end}}

<h2>Figures</h2>
{{range .Figures}}<figure id="fig-{{.Kind}}">
{{if .Src}}<img src="{{.Src}}" alt="{{.Kind}} figure"/>
<figcaption><strong>{{.Kind}}.</strong> {{.Caption}}</figcaption>{{else}}<p class="note"><strong>{{.Kind}}:</strong> not drawn: {{.Error}}</p>{{end}}
</figure>
{{end}}

{{if .HasProv}}<h2>Provenance</h2>
<table>
<tr><th>program</th><td>{{.Version}}</td></tr>
<tr><th>command</th><td class="mono">{{.Command}}</td></tr>
<tr><th>time</th><td>{{.Time}}</td></tr>
</table>
<h3>Parameters</h3>
<table>
{{range .Params}}<tr><th class="mono">{{.Key}}</th><td class="mono">{{.Value}}</td></tr>
{{end}}</table>
{{if .Cosmology}}<h3>Cosmology</h3>
<table>
{{range .Cosmology}}<tr><th class="mono">{{.Key}}</th><td class="mono">{{.Value}}</td></tr>
{{end}}</table>{{end}}
{{if .Inputs}}<h3>Inputs</h3>
<table>
<tr><th>file</th><th>rows</th><th>SHA-256</th></tr>
{{range .Inputs}}<tr><td class="mono">{{.Path}}</td><td class="num">{{.Rows}}</td><td class="mono">{{.SHA256}}</td></tr>
{{end}}</table>{{end}}
{{else}}<p class="note">The table carries no filigree provenance.</p>{{end}}
{{if .Generator}}<p class="note">Report written by {{.Generator}}.</p>{{end}}
</body>
</html>
`))
