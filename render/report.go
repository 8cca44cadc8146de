package render

import (
	"encoding/base64"
	"fmt"
	"html/template"
	"io"
	"math"
	"regexp"
)

// Caution is printed prominently at the top of every report.
const Caution = "Results are model estimates for screening and research. They are not substitutes for standard tests or for the judgement of a licensed engineer; local codes and specifications govern."

// Row is one label/value line of a report table.
type Row struct{ Label, Value string }

// Image is a PNG embedded in a report. Name must be a short identifier
// (letters, digits, '_', '-'); it becomes the image's anchor.
type Image struct {
	Name    string
	Caption string
	PNG     []byte
}

// Report is the content of report.html; the caller fills it.
type Report struct {
	Title      string
	Version    string // gelspace version that produced the results
	Mix        []Row  // the resolved mix: w/c, composition, PSD, curing
	Results    []Row  // key results: set, depercolation, α and heat at 1, 3, 7, 28 d
	Plots      []Image
	Slices     []Image
	ConfigText string // the full resolved config
}

var nameRE = regexp.MustCompile(`^[A-Za-z0-9_-]{1,64}$`)

type reportImage struct {
	ID      string
	Caption string
	Src     template.URL
}

// WriteReport writes r as one self-contained HTML page: inline CSS, images
// as data: URIs, no script and nothing fetched from elsewhere. All text is
// escaped by html/template.
func WriteReport(w io.Writer, r *Report) error {
	conv := func(kind string, ims []Image) ([]reportImage, error) {
		var out []reportImage
		for i, im := range ims {
			if !nameRE.MatchString(im.Name) {
				return nil, fmt.Errorf("render: report %s image %d name %q: must be 1–64 letters, digits, '_' or '-'", kind, i, im.Name)
			}
			if len(im.PNG) < 8 || string(im.PNG[1:4]) != "PNG" {
				return nil, fmt.Errorf("render: report %s image %q is not a PNG", kind, im.Name)
			}
			out = append(out, reportImage{ID: kind + "-" + im.Name, Caption: im.Caption,
				Src: template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(im.PNG))})
		}
		return out, nil
	}
	plots, err := conv("plot", r.Plots)
	if err != nil {
		return err
	}
	slices, err := conv("slice", r.Slices)
	if err != nil {
		return err
	}
	title := r.Title
	if title == "" {
		title = "gelspace report"
	}
	return reportTmpl.Execute(w, map[string]any{
		"Title": title, "Version": r.Version, "Mix": r.Mix, "Results": r.Results,
		"Plots": plots, "Slices": slices, "Config": r.ConfigText, "Caution": Caution,
	})
}

// KeyResults returns the key-result rows of a series: the model's set
// point (in h and min) and the depercolation time (NaN or ≤ 0: "not
// reached"), then α and cumulative heat at 1, 2, 3, 7, 28 and 90 days
// where the series reaches them ("not reached" up to 28 d; 90 d only
// when reached).
func KeyResults(s *Series, setTimeH, depercolationTimeH float64) []Row {
	when := func(h float64) string {
		if !(h > 0) || math.IsInf(h, 0) {
			return "not reached"
		}
		return fmtHMin(h)
	}
	set := when(setTimeH)
	if set != "not reached" {
		set = HoursMinutes(setTimeH)
	}
	rows := []Row{{SetPointLabel, set}, {"Capillary pores depercolate", when(depercolationTimeH)}}
	for _, d := range []float64{1, 2, 3, 7, 28, 90} {
		a, okA := s.At("alpha", 24*d)
		q, okQ := s.At("heat_j_per_g", 24*d)
		if okA {
			rows = append(rows, Row{fmt.Sprintf("Degree of hydration at %g d", d), fmt.Sprintf("%.3f", a)})
		}
		if okQ {
			rows = append(rows, Row{fmt.Sprintf("Heat at %g d", d), fmt.Sprintf("%.0f J/g", q)})
		}
		if !okA && !okQ && d <= 28 { // 90 d is listed only when reached
			rows = append(rows, Row{fmt.Sprintf("At %g d", d), "not reached"})
		}
	}
	return rows
}

var reportTmpl = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8"/>
<meta name="viewport" content="width=device-width, initial-scale=1"/>
<title>{{.Title}}</title>
<style>
body { font-family: "Liberation Sans", Arial, Helvetica, sans-serif; color: #1a1a1a; margin: 0 auto; max-width: 1100px; padding: 0 24px 48px; line-height: 1.4; }
h1 { font-size: 1.7em; margin: 24px 0 8px; }
h2 { font-size: 1.3em; margin: 32px 0 8px; border-bottom: 2px solid #d0d0d0; padding-bottom: 4px; }
.caution { border: 3px solid #b3261e; background: #fdecea; color: #5c0f0a; padding: 12px 16px; font-size: 1.1em; font-weight: bold; margin: 12px 0 20px; }
nav a { margin-right: 14px; color: #1f4e9a; }
table { border-collapse: collapse; margin: 8px 0; }
th, td { text-align: left; padding: 4px 14px 4px 0; border-bottom: 1px solid #e4e4e4; vertical-align: top; }
th { width: 22em; font-weight: normal; color: #444; }
figure { margin: 16px 0 28px; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { color: #444; margin-top: 4px; }
pre { background: #f5f5f5; border: 1px solid #ddd; padding: 12px; overflow-x: auto; font-size: 0.9em; }
footer { color: #666; margin-top: 40px; font-size: 0.9em; }
</style>
</head>
<body>
<h1>{{.Title}}</h1>
<p class="caution" role="note">{{.Caution}}</p>
<nav><a href="#mix">Mix</a><a href="#results">Key results</a><a href="#plots">Plots</a><a href="#slices">Slices</a><a href="#config">Config</a></nav>
<h2 id="mix">Mix</h2>
{{if .Mix}}<table>
{{range .Mix}}<tr><th>{{.Label}}</th><td>{{.Value}}</td></tr>
{{end}}</table>{{else}}<p>No mix given.</p>{{end}}
<h2 id="results">Key results</h2>
{{if .Results}}<table>
{{range .Results}}<tr><th>{{.Label}}</th><td>{{.Value}}</td></tr>
{{end}}</table>{{else}}<p>No results given.</p>{{end}}
<h2 id="plots">Plots</h2>
{{range .Plots}}<figure id="{{.ID}}"><img src="{{.Src}}" alt="{{.Caption}}"/><figcaption>{{.Caption}}</figcaption></figure>
{{else}}<p>No plots.</p>
{{end}}<h2 id="slices">Slices</h2>
{{range .Slices}}<figure id="{{.ID}}"><img src="{{.Src}}" alt="{{.Caption}}"/><figcaption>{{.Caption}}</figcaption></figure>
{{else}}<p>No slices.</p>
{{end}}<h2 id="config">Resolved config</h2>
<pre>{{.Config}}</pre>
<footer>Made by gelspace{{if .Version}} {{.Version}}{{end}}. {{.Caution}}</footer>
</body>
</html>
`))
