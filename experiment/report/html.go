package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"io"
	"math"
	"path"
	"path/filepath"
	"strings"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/internal/figure"
)

// Cautions are the paragraphs every report ends its summary with.
var Cautions = []string{
	eval.Disclaimer,
	"Predictions of clinical or behavioural scores from connectomes are group-level research findings. " +
		"They need ethics approval, data-use agreements covering this analysis, and clinical judgement " +
		"before anything is concluded about a person; follow the regulations that apply where you work.",
	"Cross-validated accuracy estimates how a model would do on new participants drawn like these ones: " +
		"other scanners, sites, ages or diagnoses may differ. Importance maps show what a model relies on, not causes.",
}

// page is what the HTML template reads.
type page struct {
	Title      string
	Folder     string
	Problems   []string
	Answer     string
	Answers    []htmlFigure
	Overview   []string
	Models     []modelRow
	Comparison template.HTML
	Sections   []section
	Importance []importanceBlock
	Filters    []FilterSummary
	Regions    []string
	Cautions   []string
	Seed       int64
	Versions   string
	Experiment string
}

type modelRow struct{ Name, Kind, Inputs, Detail string }

// importanceBlock is one model × target of the importance section: its
// heat map and its ranked edges.
type importanceBlock struct {
	ModelImportance
	Figure *htmlFigure
}

type section struct {
	Title   string
	Figures []htmlFigure
	// Confusions are the confusion matrices of a label's section.
	Confusions []confusionView
}

// confusionView is a ConfusionTable as the page shows it: a row per
// observed class, a cell per predicted class.
type confusionView struct {
	Model, Caption string
	Classes        []string // column heads: the predicted classes
	Rows           []confusionRow
}

type confusionRow struct {
	Class string
	Cells []confusionCell
	N     int
}

type confusionCell struct {
	Count    int
	Percent  string
	Diagonal bool
}

// view returns t as the page shows it: counts with the percentage of
// their row, and a caption saying what was pooled and how classes were
// predicted.
func (t ConfusionTable) view() confusionView {
	v := confusionView{Model: t.Model, Classes: t.Target.Classes}
	for k, counts := range t.Counts {
		row := confusionRow{Class: t.Target.Classes[k], N: t.RowTotal(k)}
		for j, c := range counts {
			pct := "–"
			if p := t.RowPercent(k, j); !math.IsNaN(p) {
				pct = fmt.Sprintf("%.0f%%", p)
			}
			row.Cells = append(row.Cells, confusionCell{Count: c, Percent: pct, Diagonal: j == k})
		}
		v.Rows = append(v.Rows, row)
	}
	pooled := "Test predictions of all folds"
	if t.Repeats > 1 {
		pooled = fmt.Sprintf("Test predictions of all folds and %d repeats (a participant counts once per repeat)", t.Repeats)
	}
	recalls := t.Recalls()
	if len(t.Counts) == 2 {
		v.Caption = fmt.Sprintf("%s; predicted %s when its probability is at least %v. Rows are the observed class, "+
			"columns the predicted one; each cell gives the count and its share of the row. "+
			"Sensitivity (%s found) %s, specificity (%s found) %s.",
			pooled, t.Target.Classes[1], t.Threshold, t.Target.Classes[1], num(recalls[1]), t.Target.Classes[0], num(recalls[0]))
		return v
	}
	var words []string
	for k, rc := range recalls {
		words = append(words, fmt.Sprintf("%s %s", t.Target.Classes[k], num(rc)))
	}
	v.Caption = fmt.Sprintf("%s; the predicted class is the most probable one. Rows are the observed class, "+
		"columns the predicted one; each cell gives the count and its share of the row. Share of each class found: %s.",
		pooled, strings.Join(words, ", "))
	return v
}

type htmlFigure struct {
	Figure
	Src template.URL
	// PNGPath and SVGPath are the figure's files, relative to the report.
	PNGPath, SVGPath string
}

// WriteHTML writes the report of r with the given figures (embedded as
// data: URIs), importance and filter summaries to w; problems, the
// failures of figures that could not be drawn, are listed at its top.
func (r *Run) WriteHTML(w io.Writer, figs []Figure, imp []ModelImportance, filters []FilterSummary, problems []error) error {
	exp := r.Experiment
	answer := r.Answer()
	pg := page{
		Title:      "skein run report — " + r.Name,
		Folder:     r.Name,
		Answer:     answer,
		Comparison: markdownHTML(withoutAnswer(r.SummaryMarkdown, eval.EscapeMarkdown(answer))),
		Filters:    filters,
		Regions:    r.Regions,
		Cautions:   Cautions,
		Seed:       exp.Seed,
		Versions:   r.Versions,
		Experiment: r.ExperimentText,
	}
	if shown, err := exp.MarshalApplicable(); err == nil {
		pg.Experiment = string(shown)
	}
	for _, p := range problems {
		pg.Problems = append(pg.Problems, p.Error())
	}
	if c := r.Cohort; c != nil {
		pg.Overview = append(pg.Overview, fmt.Sprintf("Cohort: %d participants included of %d rows in %s (%d excluded), %d regions.",
			c.Included, c.Rows, filepath.Base(c.Participants), len(c.Excluded), c.Regions))
		if c.Group != nil {
			pg.Overview = append(pg.Overview, fmt.Sprintf("Groups (column %q): %d, from %d to %d participants each; a group never spans training and test folds.",
				c.Group.Column, c.Group.Groups, c.Group.Smallest, c.Group.Largest))
		}
		if len(c.Outliers) > 0 {
			pg.Overview = append(pg.Overview, fmt.Sprintf("%d outlier flags on connectome quality (kept; see Cohort quality).", len(c.Outliers)))
		}
	}
	if len(exp.Cohort.Targets) > 0 {
		pg.Overview = append(pg.Overview, fmt.Sprintf("Scores predicted: %s.", strings.Join(exp.Cohort.Targets, ", ")))
	}
	for _, lt := range r.Labels {
		line := fmt.Sprintf("Label predicted: %s, classes %s", lt.Name, strings.Join(lt.Classes, ", "))
		if len(lt.Classes) == 2 {
			line += fmt.Sprintf(" (%s positive; predicted when its probability is at least %v)", lt.Classes[1], r.Threshold())
		}
		pg.Overview = append(pg.Overview, line+".")
	}
	cv := fmt.Sprintf("Splits: %d-fold cross-validation × %d repeats", *exp.CV.Folds, *exp.CV.Repeats)
	if len(exp.CV.Confounds) > 0 {
		cv += fmt.Sprintf("; confounds %s regressed out of the scores within each training fold", strings.Join(exp.CV.Confounds, ", "))
	}
	pg.Overview = append(pg.Overview, cv+".")
	if exp.Permutation.Count > 0 {
		pg.Overview = append(pg.Overview, fmt.Sprintf("Permutation test: %d permutations of the scores.", exp.Permutation.Count))
	}
	pg.Overview = append(pg.Overview, fmt.Sprintf("Seed %d: the same experiment file, data and seed give the same results.", exp.Seed))
	for _, m := range exp.Models {
		row := modelRow{Name: m.Name, Kind: m.Kind(), Inputs: inputsWords(m.Inputs())}
		if k, err := m.Spec(); err == nil && k.Describe != nil {
			row.Detail = k.Describe(m.Settings())
		}
		pg.Models = append(pg.Models, row)
	}
	embed := func(f Figure) htmlFigure {
		return htmlFigure{f, template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(f.PNG)),
			path.Join(experiment.FiguresDir, f.File), path.Join(experiment.FiguresDir, f.SVGFile())}
	}
	for _, f := range figs {
		if f.Section == SectionAnswer {
			pg.Answers = append(pg.Answers, embed(f))
		}
	}
	for _, m := range imp {
		b := importanceBlock{ModelImportance: m}
		for _, f := range figs {
			if f.File == m.File {
				hf := embed(f)
				b.Figure = &hf
			}
		}
		pg.Importance = append(pg.Importance, b)
	}
	titles := []string{SectionComparison, SectionPredictions}
	for _, lt := range r.Labels {
		titles = append(titles, SectionLabel(lt.Name))
	}
	titles = append(titles, SectionLearning, SectionNulls, SectionImportance, SectionFilters, SectionCohort)
	confusions := r.ConfusionTables()
	for _, title := range titles {
		s := section{Title: title}
		for _, f := range figs {
			if f.Section == title && title != SectionImportance {
				s.Figures = append(s.Figures, embed(f))
			}
		}
		for _, t := range confusions {
			if SectionLabel(t.Target.Name) == title {
				s.Confusions = append(s.Confusions, t.view())
			}
		}
		if len(s.Figures) > 0 || len(s.Confusions) > 0 || (title == SectionImportance && len(imp) > 0) || (title == SectionFilters && len(filters) > 0) {
			pg.Sections = append(pg.Sections, s)
		}
	}
	var buf bytes.Buffer
	if err := pageTemplate.Execute(&buf, pg); err != nil {
		return err
	}
	_, err := w.Write(buf.Bytes())
	return err
}

var pageTemplate = template.Must(template.New("report").Funcs(template.FuncMap{
	"num":    num,
	"pct":    func(x float64) string { return fmt.Sprintf("%.0f%%", 100*x) },
	"region": func(labels []string, i int) string { return labelOf(labels, i) },
	"imp":    func(s string) bool { return s == SectionImportance },
	"filt":   func(s string) bool { return s == SectionFilters },
	"inc":    func(i int) int { return i + 1 },
}).Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{{.Title}}</title>
<style>
body { font-family: ` + figure.FontFamily + `; max-width: 72rem; margin: 1.5rem auto; padding: 0 1rem; color: #1d1d1f; line-height: 1.45; overflow-wrap: anywhere; }
h1 { font-size: 1.6rem; margin-bottom: .2rem; }
h2 { border-bottom: 1px solid #ccd; padding-bottom: .2rem; margin-top: 2.2rem; }
h3 { margin-top: 1.4rem; }
.scroll { max-width: 100%; overflow-x: auto; }
table { border-collapse: collapse; margin: .6rem 0 1rem; font-size: .9rem; overflow-wrap: normal; }
th, td { border: 1px solid #c8c8d0; padding: .25rem .55rem; text-align: left; vertical-align: top; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; }
th { background: #eef0f5; }
td.diag { background: #eef4fb; font-weight: bold; }
p.note { font-size: .85rem; color: #444; max-width: 44rem; }
.caution { background: #fff6e0; border-left: 4px solid #d99a00; padding: .5rem 1rem; margin: 1rem 0; }
.answer { font-size: 1.1rem; background: #eef4fb; border-left: 4px solid #0072b2; padding: .6rem 1rem; margin: 1rem 0; }
figure { display: inline-block; margin: .6rem 1.5% 1.2rem 0; vertical-align: top; box-sizing: border-box; max-width: 100%; }
figure.half { width: 48%; }
figure.wide { width: 98%; }
figure img { width: 100%; height: auto; border: 1px solid #e0e0e6; box-sizing: border-box; }
figcaption { font-size: .85rem; color: #444; max-width: 44rem; }
pre { background: #f5f6f8; border: 1px solid #dde; padding: .6rem; overflow-x: auto; font-size: .8rem; overflow-wrap: normal; }
blockquote { margin: .5rem 0; padding: .3rem 1rem; border-left: 4px solid #d99a00; background: #fff6e0; }
@media (max-width: 48rem) { figure.half, figure.wide { width: 100%; margin-right: 0; } }
</style>
</head>
<body>
<h1>skein run report</h1>
<p>Run folder <code>{{.Folder}}</code>. Research software: not a diagnostic device.</p>
{{if .Problems}}<div class="caution" id="problems"><b>Parts of this report could not be made:</b>
<ul>{{range .Problems}}<li>{{.}}</li>{{end}}</ul>
Rebuild it with <code>skein report</code> once the cause is fixed.</div>
{{end}}
<h2 id="answer">The answer</h2>
<p class="answer">{{.Answer}}</p>
<div id="answer-charts">
{{range .Answers}}{{template "figure" .}}{{end}}</div>
<h2 id="summary">Summary</h2>
<ul>
{{range .Overview}}<li>{{.}}</li>
{{end}}</ul>
<div class="scroll"><table id="models">
<tr><th>model</th><th>kind</th><th>learns from</th><th>details</th></tr>
{{range .Models}}<tr><td>{{.Name}}</td><td>{{.Kind}}</td><td>{{.Inputs}}</td><td>{{.Detail}}</td></tr>
{{end}}</table></div>

<h2 id="comparison">Metrics and comparison</h2>
<div class="tables">
{{.Comparison}}
</div>
{{range .Sections}}
<h2>{{.Title}}</h2>
{{range .Figures}}{{template "figure" .}}{{end}}{{range .Confusions}}
<h3>{{.Model}} — confusion matrix</h3>
<div class="scroll"><table class="confusion">
<tr><th>observed \ predicted</th>{{range .Classes}}<th class="num">{{.}}</th>{{end}}<th class="num">n</th></tr>
{{range .Rows}}<tr><th>{{.Class}}</th>{{range .Cells}}<td class="num{{if .Diagonal}} diag{{end}}">{{.Count}} ({{.Percent}})</td>{{end}}<td class="num">{{.N}}</td></tr>
{{end}}</table></div>
<p class="note">{{.Caption}}</p>
{{end}}{{if imp .Title}}{{range $.Importance}}
<h3>{{.Model}} — {{.Target}}{{with .Class}} ({{.}}){{end}}{{with .View}} — {{.}} edges{{end}}</h3>
{{with .Decision}}<p>The maps explain the {{.}}.</p>{{end}}
{{with .Figure}}{{template "figure" .}}{{end}}
<div class="scroll"><table class="edges">
<tr><th class="num">rank</th><th>edge</th><th class="num">mean importance</th><th class="num">in top {{len .Top}} of a fold</th><th class="num">same sign</th></tr>
{{range $k, $e := .Top}}<tr><td class="num">{{inc $k}}</td><td>{{region $.Regions $e.I}} – {{region $.Regions $e.J}}</td><td class="num">{{num $e.Mean}}</td><td class="num">{{pct $e.InTop}}</td><td class="num">{{pct $e.SameSign}}</td></tr>
{{end}}</table></div>
<p>Over {{.Folds}} folds. Strongest regions (sum of |importance| over their edges):
{{range $k, $r := .Regions}}{{if $k}}, {{end}}{{region $.Regions $r.Region}} ({{num $r.Strength}}){{end}}.</p>
{{end}}{{end}}{{if filt .Title}}
<div class="scroll"><table class="filters">
<tr><th>model</th><th>branch</th><th>array</th><th class="num">folds</th><th>consistency per channel</th></tr>
{{range $.Filters}}<tr><td>{{.Model}}</td><td>{{inc .Branch}}</td><td>{{.Array}}</td><td class="num">{{.Folds}}</td><td>{{range $c, $v := .Consistency}}{{if $c}}, {{end}}{{num $v}}{{end}}</td></tr>
{{end}}</table></div>
{{end}}{{end}}
<h2 id="cautions">Cautions</h2>
{{range .Cautions}}<p class="caution">{{.}}</p>
{{end}}
<h2 id="reproduce">Reproducing this run</h2>
<p>Seed {{.Seed}}. Versions (versions.txt):</p>
<pre>{{.Versions}}</pre>
<p>The experiment as run, with every default filled and the keys that do not apply to it left out (experiment.toml in the run folder has them all):</p>
<pre>{{.Experiment}}</pre>
</body>
</html>
{{define "figure"}}<figure class="{{if gt .Width 700}}wide{{else}}half{{end}}" style="max-width: {{.Width}}px">
<img src="{{.Src}}" width="{{.Width}}" height="{{.Height}}" alt="{{.Title}}">
<figcaption><b>{{.Title}}.</b> {{.Caption}} <a href="{{.SVGPath}}">SVG</a> · <a href="{{.PNGPath}}">PNG</a></figcaption>
</figure>
{{end}}`))

// withoutAnswer returns the summary Markdown md without its paragraph
// answer, which the report shows at its top.
func withoutAnswer(md, answer string) string {
	return strings.Replace(md, "\n"+answer+"\n", "\n", 1)
}

// inputsWords names the connectomes a model learns from.
func inputsWords(functional, structural bool) string {
	switch {
	case functional && structural:
		return "both connectomes"
	case functional:
		return "functional"
	case structural:
		return "structural"
	}
	return "neither (scores only)"
}

func labelOf(labels []string, i int) string {
	if i < len(labels) {
		return labels[i]
	}
	return fmt.Sprint(i + 1)
}

// markdownHTML renders the Markdown skein's summaries use — ATX headings,
// pipe tables, block quotes, "- " lists and paragraphs — as escaped HTML. The first
// level-1 heading is dropped (the report has its own); other headings move
// down one level. Anything else is shown as text.
func markdownHTML(md string) template.HTML {
	var b strings.Builder
	esc := template.HTMLEscapeString
	lines := strings.Split(md, "\n")
	var para []string
	flush := func() {
		if len(para) > 0 {
			b.WriteString("<p>" + esc(strings.Join(para, " ")) + "</p>\n")
			para = nil
		}
	}
	droppedTitle := false
	for i := 0; i < len(lines); i++ {
		l := strings.TrimRight(lines[i], " ")
		switch {
		case l == "":
			flush()
		case strings.HasPrefix(l, "#"):
			flush()
			level := len(l) - len(strings.TrimLeft(l, "#"))
			text := strings.TrimSpace(l[level:])
			if level == 1 && !droppedTitle {
				droppedTitle = true
				continue
			}
			level = min(level+1, 6)
			fmt.Fprintf(&b, "<h%d>%s</h%d>\n", level, esc(text), level)
		case strings.HasPrefix(l, "- "):
			flush()
			b.WriteString("<ul>\n")
			for ; i < len(lines) && strings.HasPrefix(lines[i], "- "); i++ {
				b.WriteString("<li>" + esc(strings.TrimSpace(lines[i][2:])) + "</li>\n")
			}
			i--
			b.WriteString("</ul>\n")
		case strings.HasPrefix(l, ">"):
			flush()
			b.WriteString("<blockquote>" + esc(strings.TrimSpace(strings.TrimPrefix(l, ">"))) + "</blockquote>\n")
		case strings.HasPrefix(l, "|"):
			flush()
			var rows [][]string
			var align []bool // right-aligned columns
			for ; i < len(lines) && strings.HasPrefix(strings.TrimSpace(lines[i]), "|"); i++ {
				cells := splitRow(strings.TrimSpace(lines[i]))
				if isRule(cells) {
					for _, c := range cells {
						align = append(align, strings.HasSuffix(strings.TrimSpace(c), ":"))
					}
					continue
				}
				rows = append(rows, cells)
			}
			i--
			b.WriteString("<div class=\"scroll\"><table class=\"metrics\">\n")
			for ri, row := range rows {
				tag := "td"
				if ri == 0 {
					tag = "th"
				}
				b.WriteString("<tr>")
				for ci, c := range row {
					class := ""
					if ci < len(align) && align[ci] {
						class = ` class="num"`
					}
					fmt.Fprintf(&b, "<%s%s>%s</%s>", tag, class, esc(c), tag)
				}
				b.WriteString("</tr>\n")
			}
			b.WriteString("</table></div>\n")
		default:
			para = append(para, strings.TrimSpace(l))
		}
	}
	flush()
	return template.HTML(b.String())
}

// splitRow splits a Markdown table row into its cells, honouring \|.
func splitRow(l string) []string {
	l = strings.TrimSuffix(strings.TrimPrefix(l, "|"), "|")
	var cells []string
	var cur strings.Builder
	for i := 0; i < len(l); i++ {
		switch {
		case l[i] == '\\' && i+1 < len(l) && l[i+1] == '|':
			cur.WriteByte('|')
			i++
		case l[i] == '|':
			cells = append(cells, strings.TrimSpace(cur.String()))
			cur.Reset()
		default:
			cur.WriteByte(l[i])
		}
	}
	return append(cells, strings.TrimSpace(cur.String()))
}

func isRule(cells []string) bool {
	for _, c := range cells {
		if strings.Trim(c, "-: ") != "" || !strings.Contains(c, "-") {
			return false
		}
	}
	return len(cells) > 0
}
