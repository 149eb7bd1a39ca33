package report

import (
	"fmt"
	"image/color"
	"math"
	"slices"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/internal/figure"
)

// The marks of the answer chart: baselines, models that fuse structure
// with function, and the other models.
var (
	colorBaseline = color.RGBA{R: 0x70, G: 0x70, B: 0x70, A: 0xff}
	colorFusion   = color.RGBA{R: 0xd5, G: 0x5e, B: 0x00, A: 0xff}
	colorModel    = color.RGBA{R: 0x00, G: 0x72, B: 0xb2, A: 0xff}
)

// Answer returns the sentences that open the report, as summary.md opens
// with them (experiment.AnswerRun), or says that the run folder has no
// comparison.csv to answer from.
func (r *Run) Answer() string {
	if r.Comparisons == nil {
		return fmt.Sprintf("This run folder has no %s (it was made by an earlier skein), so the report cannot "+
			"answer whether fusing structure with function beat the reference baseline; run the experiment again.",
			experiment.ComparisonFile)
	}
	var labels []eval.ClassGroup
	if r.Summary != nil {
		labels = r.Summary.Labels
	}
	return experiment.AnswerRun(r.Experiment, r.Comparisons, labels)
}

// AnswerFigures draws, for every target, the chart that answers the run's
// question: every model's pooled r within folds (the headline r,
// eval.MetricPearsonWithin) and MAE, each with its percentile bootstrap
// interval from comparison.csv, one row per model in report order.
// Baselines are grey, squares or, when they learn from both connectomes
// (experiment.Fusion), triangles; the other models are blue circles or,
// learning from both, orange triangles; a
// dotted line marks the reference baseline's value and, for r, a dashed
// line chance (r = 0). Both axes are padded to hold every interval. A run
// without comparison.csv draws none.
func (r *Run) AnswerFigures() ([]Figure, error) {
	if len(r.Comparisons) == 0 {
		return nil, nil
	}
	fusion := experiment.Fusion(r.Experiment)
	var figs []Figure
	for _, t := range r.targets() {
		var comps []eval.Comparison
		for _, c := range r.Comparisons {
			if c.Target == t {
				comps = append(comps, c)
			}
		}
		if len(comps) == 0 {
			continue
		}
		row, k, ref, err := answerPanels(t, comps, fusion)
		if err != nil {
			return nil, err
		}
		level := comps[0].R.Level
		caption := fmt.Sprintf("Every model on %s: pooled r within folds (the headline r) and MAE, with %.0f%% "+
			"percentile bootstrap intervals over participants (%d resamples), the models in the experiment's order. "+
			"Baselines are grey, other models in colour; triangles learn from both the functional and the "+
			"structural connectome (orange: models that fuse structure with function), squares and circles from one. Higher r and lower MAE are better. Intervals "+
			"that overlap do not by themselves mean that two models do not differ: the test is the corrected "+
			"resampled t-test of the comparison table.", t, 100*level, comps[0].R.Resamples)
		if ref != "" {
			caption += fmt.Sprintf(" The dotted line is the reference baseline %s.", ref)
		}
		for _, c := range comps {
			if math.IsNaN(c.R.Estimate) {
				caption += " A model without a mark on r has no defined r (its predictions are constant)."
				break
			}
		}
		title := t + ": r within folds and MAE of every model"
		height := 1.2 + 0.24*float64(len(comps))
		f, err := drawFigure(fileName("answer", t), SectionAnswer, title, caption, figure.DoubleColumn, height, row, k)
		if err != nil {
			return nil, err
		}
		figs = append(figs, f)
	}
	return figs, nil
}

// answerPanels draws the two panels of the answer chart of target t from
// its comparisons, in report order, and returns them with their key and
// the reference baseline ("" when there is none). fusion names the
// models that learn from both connectomes.
func answerPanels(t string, comps []eval.Comparison, fusion []string) (row []*plot.Plot, k figure.Key, ref string, err error) {
	for _, c := range comps {
		if c.IsReference {
			ref = c.Model
		} else if c.Reference != "" {
			ref = c.Reference
		}
	}
	names := make([]string, len(comps))
	for i, c := range comps {
		names[len(comps)-1-i] = c.Model // the first model on top
		if c.Model == ref {
			names[len(comps)-1-i] += " (reference)"
		}
	}
	for _, m := range []struct {
		metric eval.Metric
		label  string
		of     func(eval.Comparison) eval.Interval
	}{
		{eval.MetricPearsonWithin, "r within folds", func(c eval.Comparison) eval.Interval { return c.R }},
		{eval.MetricMAE, "MAE", func(c eval.Comparison) eval.Interval { return c.MAE }},
	} {
		p := figure.NewPlot("", fmt.Sprintf("%s (%s)", m.label, t), "")
		if len(row) == 0 {
			p.NominalY(names...)
		} else {
			p.NominalY(make([]string, len(names))...) // the rows are named once, on the left
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		groups := map[string]*intervalMarks{}
		for i, c := range comps {
			iv := m.of(c)
			if math.IsNaN(iv.Estimate) {
				continue
			}
			class := "model"
			if c.Baseline {
				class = "baseline"
			}
			if slices.Contains(fusion, c.Model) {
				class += " fusion"
			}
			g := groups[class]
			if g == nil {
				g = &intervalMarks{}
				groups[class] = g
			}
			y := float64(len(comps) - 1 - i)
			low, high := iv.Lower, iv.Upper
			if math.IsNaN(low) || math.IsNaN(high) {
				low, high = iv.Estimate, iv.Estimate
			}
			g.XYs = append(g.XYs, plotter.XY{X: iv.Estimate, Y: y})
			g.XErrors = append(g.XErrors, struct{ Low, High float64 }{iv.Estimate - low, high - iv.Estimate})
			lo, hi = math.Min(lo, math.Min(low, iv.Estimate)), math.Max(hi, math.Max(high, iv.Estimate))
			if c.Model == ref {
				l, err := line(iv.Estimate, -0.5, iv.Estimate, float64(len(comps))-0.5, colorBaseline, true)
				if err != nil {
					return nil, nil, "", err
				}
				l.Dashes = []vg.Length{vg.Points(1), vg.Points(2)}
				l.Width = vg.Points(0.8)
				p.Add(l)
				k.Add(fmt.Sprintf("reference baseline (%s)", ref), l)
			}
		}
		if m.metric == eval.MetricPearsonWithin {
			chance, err := line(0, -0.5, 0, float64(len(comps))-0.5, colorGuide, true)
			if err != nil {
				return nil, nil, "", err
			}
			chance.Width = vg.Points(0.8)
			p.Add(chance)
			lo, hi = math.Min(lo, 0), math.Max(hi, 0)
			k.Add("chance (r = 0)", chance)
		}
		for _, class := range []struct {
			name, label string
			col         color.Color
			shape       draw.GlyphDrawer
		}{
			{"baseline", "baseline", colorBaseline, draw.BoxGlyph{}},
			{"baseline fusion", "baseline on both connectomes", colorBaseline, draw.PyramidGlyph{}},
			{"model", "model on one connectome", colorModel, draw.CircleGlyph{}},
			{"model fusion", "model on both connectomes (fusion)", colorFusion, draw.PyramidGlyph{}},
		} {
			g := groups[class.name]
			if g == nil {
				continue
			}
			bars, err := plotter.NewXErrorBars(g)
			if err != nil {
				return nil, nil, "", err
			}
			bars.Color = class.col
			bars.LineStyle.Width = vg.Points(1.2)
			bars.CapWidth = vg.Points(5)
			sc, err := plotter.NewScatter(g.XYs)
			if err != nil {
				return nil, nil, "", err
			}
			sc.GlyphStyle.Color = class.col
			sc.GlyphStyle.Shape = class.shape
			sc.GlyphStyle.Radius = vg.Points(3)
			p.Add(bars, sc)
			whisker, err := line(0, 0, 1, 0, class.col, false)
			if err != nil {
				return nil, nil, "", err
			}
			k.Add(class.label, whisker, sc)
		}
		// Pad the range so that no interval or cap touches the frame.
		p.X.Min, p.X.Max = math.Inf(1), math.Inf(-1)
		if math.IsInf(lo, 0) {
			lo, hi = 0, 1
		}
		figure.PadRange(&p.X, lo, hi, 0.06)
		p.Y.Min, p.Y.Max = -0.6, float64(len(comps))-0.4
		row = append(row, p)
	}
	return row, k, ref, nil
}

// intervalMarks are points with horizontal intervals, for
// plotter.NewXErrorBars.
type intervalMarks struct {
	plotter.XYs
	plotter.XErrors
}
