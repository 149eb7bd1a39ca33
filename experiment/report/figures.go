package report

import (
	"fmt"
	"image/color"
	"math"
	"slices"
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette/moreland"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/internal/figure"
)

// A Figure is one figure of a report, drawn as PNG (embedded in the
// page) and as SVG (for a paper), both saved under figures/.
type Figure struct {
	// File is the PNG's name under figures/, such as
	// "observed-ridge-recall.png"; SVGFile names the SVG beside it.
	File string
	// Section is the heading of the report the figure belongs under.
	Section string
	// Title and Caption describe it for the reader.
	Title, Caption string
	// Width and Height are the PNG's size in pixels.
	Width, Height int
	PNG           []byte
	// SVG is the same figure as scalable vector graphics.
	SVG []byte
}

// SVGFile returns the name of the figure's SVG under figures/: File with
// the extension .svg.
func (f Figure) SVGFile() string { return strings.TrimSuffix(f.File, ".png") + ".svg" }

// Sections of the report, in order.
const (
	SectionAnswer      = "The answer"
	SectionPredictions = "Observed and predicted scores"
	SectionComparison  = "Model comparison"
	SectionLearning    = "Learning curves"
	SectionNulls       = "Permutation test"
	SectionImportance  = "Edge importance"
	SectionFilters     = "First-layer filters of the graph networks"
	SectionCohort      = "Cohort quality"
)

var (
	colorPoints  = color.RGBA{R: 0x1f, G: 0x5f, B: 0xa8, A: 0xb0}
	colorFit     = color.RGBA{R: 0xc0, G: 0x39, B: 0x2b, A: 0xff}
	colorGuide   = color.RGBA{R: 0x80, G: 0x80, B: 0x80, A: 0xff}
	colorOutlier = color.RGBA{R: 0xd0, G: 0x10, B: 0x10, A: 0xff}
	colorGrid    = color.RGBA{R: 0xdd, G: 0xdd, B: 0xdd, A: 0xff}
)

// newGrid returns light grid lines.
func newGrid() *plotter.Grid {
	g := plotter.NewGrid()
	g.Vertical.Color = colorGrid
	g.Horizontal.Color = colorGrid
	return g
}

// fileName makes s safe in a file name: letters, digits, '-', '_' and '.'
// are kept, anything else becomes '_'.
func fileName(parts ...string) string {
	s := strings.Join(parts, "-")
	return strings.Map(func(r rune) rune {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '-', r == '_', r == '.':
			return r
		}
		return '_'
	}, s) + ".png"
}

func line(x0, y0, x1, y1 float64, c color.Color, dashed bool) (*plotter.Line, error) {
	l, err := plotter.NewLine(plotter.XYs{{X: x0, Y: y0}, {X: x1, Y: y1}})
	if err != nil {
		return nil, err
	}
	l.Color = c
	l.Width = vg.Points(1.2)
	if dashed {
		l.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
	}
	return l, nil
}

// ObservedFigures draws, for every model and target, the observed scores
// against the pooled test predictions, one point per prediction (a
// participant once per repeat), with the identity line and the least
// squares line of predicted on observed; the title gives the pooled r and
// MAE.
func (r *Run) ObservedFigures() ([]Figure, error) {
	type pair struct{ model, target string }
	var keys []pair
	points := make(map[pair]plotter.XYs)
	for _, row := range r.Rows {
		if math.IsNaN(row.Observed) || math.IsNaN(row.Predicted) {
			continue
		}
		k := pair{row.Model, row.Target}
		if _, ok := points[k]; !ok {
			keys = append(keys, k)
		}
		points[k] = append(points[k], plotter.XY{X: row.Observed, Y: row.Predicted})
	}
	slices.SortStableFunc(keys, func(a, b pair) int { return r.compareUnits(a.model, a.target, b.model, b.target) })
	var figs []Figure
	for _, mt := range keys {
		xys := points[mt]
		obs := make([]float64, len(xys))
		pred := make([]float64, len(xys))
		for i, xy := range xys {
			obs[i], pred[i] = xy.X, xy.Y
		}
		rv, mae := eval.Pearson(obs, pred), eval.MAE(obs, pred)
		title := fmt.Sprintf("%s — %s: r = %s, MAE = %s", mt.model, mt.target, num(rv), num(mae))
		p := figure.NewPlot(title, "observed "+mt.target, "predicted "+mt.target)
		sc, err := plotter.NewScatter(xys)
		if err != nil {
			return nil, err
		}
		sc.GlyphStyle.Color = colorPoints
		sc.GlyphStyle.Radius = vg.Points(2)
		sc.GlyphStyle.Shape = draw.CircleGlyph{}
		lo, hi := math.Min(floats(obs).min(), floats(pred).min()), math.Max(floats(obs).max(), floats(pred).max())
		identity, err := line(lo, lo, hi, hi, colorGuide, true)
		if err != nil {
			return nil, err
		}
		p.Add(sc, identity)
		var k figure.Key
		k.Add("participant (pooled test folds)", sc)
		k.Add("identity", identity)
		alpha, beta := stat.LinearRegression(obs, pred, nil, false)
		if !math.IsNaN(alpha) && !math.IsNaN(beta) {
			x0, x1 := floats(obs).min(), floats(obs).max()
			fit, err := line(x0, alpha+beta*x0, x1, alpha+beta*x1, colorFit, false)
			if err != nil {
				return nil, err
			}
			p.Add(fit)
			k.Add(fmt.Sprintf("least squares: %s + %s·observed", num(alpha), num(beta)), fit)
		}
		caption := fmt.Sprintf("%d test predictions of %s for %s, pooled over folds and repeats. "+
			"Points on the dashed identity line are predicted exactly.", len(xys), mt.model, mt.target)
		if c := r.Experiment.CV.Confounds; len(c) > 0 {
			caption += fmt.Sprintf(" Scores are as in predictions.csv: residuals after regressing out %s, fitted on each training fold.",
				strings.Join(c, ", "))
		}
		f, err := drawFigure(fileName("observed", mt.model, mt.target), SectionPredictions, title, caption, figure.SingleColumn, 3.6, []*plot.Plot{p}, k)
		if err != nil {
			return nil, err
		}
		figs = append(figs, f)
	}
	return figs, nil
}

// ComparisonFigures draws, for every target, the per-fold Pearson r and
// MAE of every model (baselines included) from metrics.json: a box plot
// and one point per repeat × fold.
func (r *Run) ComparisonFigures() ([]Figure, error) {
	var figs []Figure
	for _, t := range r.targets() {
		var groups []eval.Group
		for _, g := range r.Summary.Groups {
			if g.Target == t && len(g.Folds) > 0 {
				groups = append(groups, g)
			}
		}
		slices.SortStableFunc(groups, func(a, b eval.Group) int { return r.compareUnits(a.Model, a.Target, b.Model, b.Target) })
		if len(groups) == 0 {
			continue
		}
		var row []*plot.Plot
		var k figure.Key
		for _, m := range []eval.Metric{eval.MetricPearson, eval.MetricMAE} {
			p := figure.NewPlot(m.Label()+" per fold", "", m.Label())
			var names []string
			lo, hi := math.Inf(1), math.Inf(-1)
			for i, g := range groups {
				names = append(names, g.Model)
				var vals plotter.Values
				var pts plotter.XYs
				for j, f := range g.Folds {
					v := f.Get(m)
					if math.IsNaN(v) {
						continue
					}
					vals = append(vals, v)
					lo, hi = math.Min(lo, v), math.Max(hi, v)
					// A fixed jitter spreads the points of one model.
					jitter := 0.25 * (float64(j%7)/6 - 0.5)
					pts = append(pts, plotter.XY{X: float64(i) + jitter, Y: v})
				}
				if len(vals) == 0 {
					continue
				}
				box, err := plotter.NewBoxPlot(vg.Points(16), float64(i), vals)
				if err != nil {
					return nil, err
				}
				box.GlyphStyle.Radius = 0
				sc, err := plotter.NewScatter(pts)
				if err != nil {
					return nil, err
				}
				sc.GlyphStyle.Color = colorPoints
				sc.GlyphStyle.Radius = vg.Points(1.6)
				sc.GlyphStyle.Shape = draw.CircleGlyph{}
				p.Add(box, sc)
				if len(k) == 0 {
					k.Add("test fold (repeat × fold)", sc)
				}
			}
			p.NominalX(names...)
			// Every model keeps its place in both panels, with or without
			// values (the mean predictor has no r).
			p.X.Min, p.X.Max = -0.5, float64(len(names))-0.5
			p.X.Tick.Label.Rotation = math.Pi / 6
			p.X.Tick.Label.XAlign = draw.XRight
			p.X.Tick.Label.YAlign = draw.YCenter
			figure.PadRange(&p.Y, lo, hi, 0.05)
			row = append(row, p)
		}
		title := "Per-fold Pearson r and MAE on " + t
		caption := fmt.Sprintf("One point per test fold of every repeat (%d per model); boxes span the quartiles, "+
			"whiskers 1.5 interquartile ranges. Higher r and lower MAE are better. Folds share participants "+
			"across repeats, so the points are not independent.", len(groups[0].Folds))
		f, err := drawFigure(fileName("comparison", t), SectionComparison, title, caption, figure.DoubleColumn, 3.2, row, k)
		if err != nil {
			return nil, err
		}
		figs = append(figs, f)
	}
	return figs, nil
}

// foldColors are the colours of the folds in the learning curves
// (Okabe & Ito's colour-blind-safe palette without yellow, then darker
// tones).
var foldColors = []color.Color{
	color.RGBA{R: 0x00, G: 0x72, B: 0xb2, A: 0xff}, color.RGBA{R: 0xd5, G: 0x5e, B: 0x00, A: 0xff},
	color.RGBA{R: 0x00, G: 0x9e, B: 0x73, A: 0xff}, color.RGBA{R: 0xcc, G: 0x79, B: 0xa7, A: 0xff},
	color.RGBA{R: 0x56, G: 0xb4, B: 0xe9, A: 0xff}, color.RGBA{R: 0xe6, G: 0x9f, B: 0x00, A: 0xff},
	color.RGBA{R: 0x00, G: 0x00, B: 0x00, A: 0xff}, color.RGBA{R: 0x88, G: 0x44, B: 0x00, A: 0xff},
	color.RGBA{R: 0x44, G: 0x44, B: 0x99, A: 0xff}, color.RGBA{R: 0x99, G: 0x99, B: 0x99, A: 0xff},
}

// LearningFigures draws, for every model that trained in epochs, the
// training (solid) and inner-validation (dashed) loss per epoch of each
// fold, one colour per fold, with the early-stopping epoch (the last
// epoch marked best) as a dot. An ensemble draws one line per member in
// its fold's colour. The key under the plot names the fold of each
// colour ("r1 f2": repeat 1, fold 2; folds share a colour when there are
// more folds than colours) and the line styles.
func (r *Run) LearningFigures() ([]Figure, error) {
	type unit struct {
		repeat, fold, member int
	}
	var models []string
	curves := make(map[string]map[unit][]CurvePoint)
	var order = make(map[string][]unit)
	for _, c := range r.Curves {
		if curves[c.Model] == nil {
			models = append(models, c.Model)
			curves[c.Model] = make(map[unit][]CurvePoint)
		}
		u := unit{c.Repeat, c.Fold, c.Member}
		if _, ok := curves[c.Model][u]; !ok {
			order[c.Model] = append(order[c.Model], u)
		}
		curves[c.Model][u] = append(curves[c.Model][u], c)
	}
	if r.Experiment != nil {
		slices.SortStableFunc(models, func(a, b string) int { return r.compareUnits(a, "", b, "") })
	}
	var figs []Figure
	for _, m := range models {
		title := m + ": loss per epoch"
		p := figure.NewPlot(title, "epoch", "loss (standardized scores)")
		var best plotter.XYs
		hasValid := false
		yMax := math.Inf(-1)
		folds := make(map[unit]int) // colour index per fold
		var foldNames [][]string    // the folds of each colour
		members := 0
		for _, u := range order[m] {
			fold := unit{u.repeat, u.fold, 0}
			if _, ok := folds[fold]; !ok {
				i := len(folds)
				folds[fold] = i
				if i < len(foldColors) {
					foldNames = append(foldNames, nil)
				}
				c := i % len(foldColors)
				foldNames[c] = append(foldNames[c], fmt.Sprintf("r%d f%d", u.repeat+1, u.fold+1))
			}
			members = max(members, u.member)
		}
		var k figure.Key
		keyed := make([]bool, len(foldNames))
		for _, u := range order[m] {
			i := folds[unit{u.repeat, u.fold, 0}] % len(foldColors)
			pts := curves[m][u]
			var tr, va plotter.XYs
			var bestPt *plotter.XY
			for _, c := range pts {
				tr = append(tr, plotter.XY{X: float64(c.Epoch), Y: c.TrainLoss})
				yMax = math.Max(yMax, c.TrainLoss)
				if !math.IsNaN(c.ValidLoss) {
					yMax = math.Max(yMax, c.ValidLoss)
					va = append(va, plotter.XY{X: float64(c.Epoch), Y: c.ValidLoss})
				}
				if c.Best {
					y := c.TrainLoss
					if !math.IsNaN(c.ValidLoss) {
						y = c.ValidLoss
					}
					bestPt = &plotter.XY{X: float64(c.Epoch), Y: y}
				}
			}
			col := foldColors[i]
			l, err := plotter.NewLine(tr)
			if err != nil {
				return nil, err
			}
			l.Color = col
			p.Add(l)
			if !keyed[i] {
				keyed[i] = true
				k.Add(strings.Join(foldNames[i], ", "), l)
			}
			if len(va) > 0 {
				hasValid = true
				lv, err := plotter.NewLine(va)
				if err != nil {
					return nil, err
				}
				lv.Color = col
				lv.Dashes = []vg.Length{vg.Points(4), vg.Points(2)}
				p.Add(lv)
			}
			if bestPt != nil {
				best = append(best, *bestPt)
			}
		}
		trainKey, _ := line(0, 0, 1, 1, colorGuide, false)
		k.Add("training loss", trainKey)
		if hasValid {
			validKey, _ := line(0, 0, 1, 1, colorGuide, true)
			k.Add("inner-validation loss", validKey)
		}
		if len(best) > 0 {
			sc, err := plotter.NewScatter(best)
			if err != nil {
				return nil, err
			}
			sc.GlyphStyle.Shape = draw.CircleGlyph{}
			sc.GlyphStyle.Radius = vg.Points(2.5)
			sc.GlyphStyle.Color = color.Black
			p.Add(sc)
			k.Add("kept epoch (early stopping)", sc)
		}
		if !math.IsInf(yMax, 0) {
			p.Y.Min = 0
			figure.PadRange(&p.Y, 0, yMax, 0.04)
			p.Y.Min = 0
		}
		caption := fmt.Sprintf("%d folds (all repeats), one colour per fold, named in the key (rR fF: repeat R, fold F). "+
			"The loss is computed on the standardized scores each training fold fitted. The dot marks the epoch whose "+
			"weights were kept.", len(folds))
		if members > 0 {
			caption += fmt.Sprintf(" Each fold trained an ensemble of %d networks, one line per network, each "+
				"stopped early on its own part of the training fold.", members)
		}
		f, err := drawFigure(fileName("learning", m), SectionLearning, title, caption, figure.DoubleColumn, 3.6, []*plot.Plot{p}, k)
		if err != nil {
			return nil, err
		}
		figs = append(figs, f)
	}
	return figs, nil
}

// NullFigures draws, for every model and target of the permutation test,
// the histogram of the headline r (r within folds) under permutation with
// the observed r as a vertical line and its permutation p-value in the
// title; then, for every model and class label, the same of the headline
// AUC (AUC within folds, eval.AUCWithinFolds).
func (r *Run) NullFigures() ([]Figure, error) {
	var figs []Figure
	for _, n := range r.Nulls {
		null := make([]float64, len(n.Null))
		for k, v := range n.Null {
			null[k] = v.Get(eval.MetricPearsonWithin)
		}
		obs := n.Observed.Get(eval.MetricPearsonWithin)
		pv := n.P.Get(eval.MetricPearsonWithin)
		title := fmt.Sprintf("%s — %s: observed r = %s, p = %s", n.Model, n.Target, num(obs), pValue(pv))
		caption := fmt.Sprintf("The whole cross-validation of %s repeated with the scores permuted %d times. "+
			"p = (1 + #{null r ≥ observed r}) / (1 + permutations).", n.Model, len(n.Null))
		f, err := nullFigure(fileName("null", n.Model, n.Target), title, "r within folds", caption, obs, null)
		if err != nil {
			return nil, err
		}
		if f != nil {
			figs = append(figs, *f)
		}
	}
	for _, n := range r.ClassNulls {
		title := fmt.Sprintf("%s — %s: observed AUC within folds = %s, p = %s", n.Model, n.Label, num(n.Observed), pValue(n.P))
		caption := fmt.Sprintf("The whole cross-validation of %s repeated with the labels permuted %d times (with the scores, "+
			"in the same blocks), its classifiers refitted each time. AUC within folds: each positive ranked against each "+
			"negative participant of the same test fold, over all folds of all repeats; 0.5 is chance. p = (1 + #{null AUC ≥ observed AUC}) / (1 + permutations).", n.Model, len(n.Null))
		f, err := nullFigure(fileName("null", n.Model, n.Label), title, "AUC within folds", caption, n.Observed, n.Null)
		if err != nil {
			return nil, err
		}
		if f != nil {
			figs = append(figs, *f)
		}
	}
	return figs, nil
}

// nullFigure draws the histogram of the values of null that are not NaN,
// with obs (unless NaN) as a vertical line; nil when every value is NaN.
func nullFigure(file, title, xLabel, caption string, obs float64, null []float64) (*Figure, error) {
	var vals plotter.Values
	for _, x := range null {
		if !math.IsNaN(x) {
			vals = append(vals, x)
		}
	}
	if len(vals) == 0 {
		return nil, nil
	}
	p := figure.NewPlot(title, xLabel, "permutations")
	bins := max(5, min(30, len(vals)/5))
	h, err := plotter.NewHist(vals, bins)
	if err != nil {
		return nil, err
	}
	h.FillColor = color.RGBA{R: 0xa6, G: 0xc4, B: 0xe6, A: 0xff}
	p.Add(h)
	top := 0.0
	for _, b := range h.Bins {
		top = math.Max(top, b.Weight)
	}
	var k figure.Key
	if !math.IsNaN(obs) {
		l, err := line(obs, 0, obs, top*1.05, colorFit, false)
		if err != nil {
			return nil, err
		}
		l.Width = vg.Points(1.5)
		p.Add(l)
		k.Add("observed", l)
	}
	k.Add(fmt.Sprintf("null (%d permutations)", len(null)), h)
	p.Y.Min, p.Y.Max = 0, top*1.08
	figure.PadRange(&p.X, obs, obs, 0.04)
	f, err := drawFigure(file, SectionNulls, title, caption, figure.SingleColumn, 3, []*plot.Plot{p}, k)
	if err != nil {
		return nil, err
	}
	return &f, nil
}

// matrixGrid is a GridXYZ over a rows × cols row-major matrix: column c
// of the grid is matrix column c, grid row r is matrix row r.
type matrixGrid struct {
	rows, cols int
	z          []float64
}

func (g matrixGrid) Dims() (c, r int)   { return g.cols, g.rows }
func (g matrixGrid) Z(c, r int) float64 { return g.z[r*g.cols+c] }
func (g matrixGrid) X(c int) float64    { return float64(c) }
func (g matrixGrid) Y(r int) float64    { return float64(r) }

// labelTicks labels integer positions with names, at most about limit of
// them.
type labelTicks struct {
	names []string
	limit int
}

func (t labelTicks) Ticks(lo, hi float64) []plot.Tick {
	step := max(1, (len(t.names)+t.limit-1)/t.limit)
	var ticks []plot.Tick
	for i, n := range t.names {
		if i%step == 0 {
			ticks = append(ticks, plot.Tick{Value: float64(i), Label: n})
		} else {
			ticks = append(ticks, plot.Tick{Value: float64(i)})
		}
	}
	return ticks
}

// heatMap draws z (rows × cols, row-major) with a diverging palette
// centred on zero, row 0 on top, and a colour bar on the right.
func heatMap(title, xLabel, yLabel string, xNames, yNames []string, rows, cols int, z []float64, w, h float64) (figure.Image, error) {
	extent := 0.0
	for _, v := range z {
		if !math.IsNaN(v) {
			extent = math.Max(extent, math.Abs(v))
		}
	}
	if extent == 0 {
		extent = 1
	}
	cm := moreland.SmoothBlueRed()
	cm.SetMin(-extent)
	cm.SetMax(extent)
	hm := plotter.NewHeatMap(matrixGrid{rows, cols, z}, cm.Palette(255))
	hm.Min, hm.Max = -extent, extent
	hm.NaN = color.RGBA{R: 0xdd, G: 0xdd, B: 0xdd, A: 0xff}
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = xLabel
	p.Y.Label.Text = yLabel
	figure.Style(p)
	p.Add(hm)
	p.X.Tick.Marker = labelTicks{xNames, 24}
	p.Y.Tick.Marker = labelTicks{yNames, 32}
	p.X.Tick.Label.Rotation = math.Pi / 2
	p.X.Tick.Label.XAlign = draw.XRight
	p.X.Tick.Label.YAlign = draw.YCenter
	p.Y.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}

	bar := plot.New()
	figure.Style(bar)
	bar.HideX()
	bar.Y.Padding = 0
	bar.Title.Text = " "
	bar.Add(&plotter.ColorBar{ColorMap: cm, Vertical: true})
	return figure.Render(w, h, func(dc draw.Canvas) {
		barWidth := vg.Inch * 0.9
		p.Draw(draw.Crop(dc, 0, -barWidth, 0, 0))
		bar.Draw(draw.Crop(dc, dc.Max.X-dc.Min.X-barWidth, 0, vg.Inch*0.55, 0))
	})
}

// CohortFigure draws, from cohort.json, each quality measure of the
// cohort (functional mean connectivity, structural mean connectivity and
// density): its range as a line, mean ± SD as a box, and the flagged
// outliers as labelled red points. It returns false when the run has no
// cohort.json.
func (r *Run) CohortFigure() (Figure, bool, error) {
	c := r.Cohort
	if c == nil {
		return Figure{}, false, nil
	}
	var names []string
	var stats [][5]float64 // n, mean, sd, min, max
	var values [][]float64 // each participant's value; nil in runs that did not keep them
	add := func(name string, st data.Stat, v []float64) {
		names = append(names, name)
		stats = append(stats, [5]float64{float64(st.N), st.Mean, st.SD, st.Min, st.Max})
		values = append(values, v)
	}
	if f := c.Functional; f != nil {
		add("functional mean connectivity", f.MeanConnectivity, f.ParticipantMeans)
	}
	if s := c.Structural; s != nil {
		add("structural mean connectivity", s.MeanConnectivity, s.ParticipantMeans)
		if d := s.Density; d != nil {
			add("structural density", *d, s.ParticipantDensities)
		}
	}
	if len(names) == 0 {
		return Figure{}, false, nil
	}
	var row []*plot.Plot
	var k figure.Key
	for i, name := range names {
		st := stats[i]
		if len(values[i]) > 1 {
			p, err := cohortHistogram(name, values[i], c.Outliers, c.OutlierSD, &k)
			if err != nil {
				return Figure{}, false, err
			}
			row = append(row, p)
			continue
		}
		p := figure.NewPlot(name, name, "")
		p.HideY()
		rangeLine, err := line(st[3], 0, st[4], 0, colorGuide, false)
		if err != nil {
			return Figure{}, false, err
		}
		rangeLine.Width = vg.Points(2)
		lo, hi := st[1]-st[2], st[1]+st[2]
		box, err := plotter.NewPolygon(plotter.XYs{{X: lo, Y: -0.3}, {X: hi, Y: -0.3}, {X: hi, Y: 0.3}, {X: lo, Y: 0.3}})
		if err != nil {
			return Figure{}, false, err
		}
		box.Color = color.RGBA{R: 0xa6, G: 0xc4, B: 0xe6, A: 0xff}
		mean, err := line(st[1], -0.3, st[1], 0.3, color.Black, false)
		if err != nil {
			return Figure{}, false, err
		}
		p.Add(rangeLine, box, mean)
		k.Add("range", rangeLine)
		k.Add("mean ± SD", box)
		var flagged []data.Outlier
		for _, o := range c.Outliers {
			if o.Measure == name {
				flagged = append(flagged, o)
			}
		}
		sort.Slice(flagged, func(a, b int) bool { return flagged[a].Value < flagged[b].Value })
		var pts plotter.XYs
		var labels []string
		for k, o := range flagged {
			// Staggered heights keep the labels of close outliers apart.
			pts = append(pts, plotter.XY{X: o.Value, Y: 0.45 + 0.3*float64(k%4)})
			labels = append(labels, o.ID)
		}
		if len(pts) > 0 {
			sc, err := plotter.NewScatter(pts)
			if err != nil {
				return Figure{}, false, err
			}
			sc.GlyphStyle.Color = colorOutlier
			sc.GlyphStyle.Shape = draw.TriangleGlyph{}
			sc.GlyphStyle.Radius = vg.Points(4)
			lb, err := plotter.NewLabels(plotter.XYLabels{XYs: pts, Labels: labels})
			if err != nil {
				return Figure{}, false, err
			}
			for j := range lb.TextStyle {
				lb.TextStyle[j].Font = figure.Font(figure.SmallFontSize)
				lb.TextStyle[j].Rotation = math.Pi / 4
			}
			p.Add(sc, lb)
			k.Add(fmt.Sprintf("flagged outlier (> %g robust SD)", c.OutlierSD), sc)
		}
		p.Y.Min, p.Y.Max = -1.6, 2.2
		row = append(row, p)
	}
	title := "Cohort quality"
	caption := fmt.Sprintf("Per-participant measures of the %d included participants, before preprocessing "+
		"(histograms; runs made before skein kept each participant's value show range and mean ± SD); red "+
		"triangles mark the participants flagged as outliers (more than %g robust SDs from the median). "+
		"Outliers are flagged, not excluded.", c.Included, c.OutlierSD)
	f, err := drawFigure("cohort.png", SectionCohort, title, caption, min(figure.DoubleColumn, figure.SingleColumn*float64(len(row))), 2.8, row, k)
	if err != nil {
		return Figure{}, false, err
	}
	return f, true, nil
}

// cohortHistogram draws the distribution of one quality measure over the
// participants with its flagged outliers marked and labelled.
func cohortHistogram(name string, values []float64, outliers []data.Outlier, outlierSD float64, k *figure.Key) (*plot.Plot, error) {
	p := figure.NewPlot(name, name, "participants")
	hist, err := plotter.NewHist(plotter.Values(values), min(20, max(5, len(values)/5)))
	if err != nil {
		return nil, err
	}
	hist.FillColor = color.RGBA{R: 0xa6, G: 0xc4, B: 0xe6, A: 0xff}
	p.Add(hist)
	top := 0.0
	for _, b := range hist.Bins {
		top = math.Max(top, b.Weight)
	}
	var flagged []data.Outlier
	for _, o := range outliers {
		if o.Measure == name {
			flagged = append(flagged, o)
		}
	}
	sort.Slice(flagged, func(a, b int) bool { return flagged[a].Value < flagged[b].Value })
	var pts plotter.XYs
	var labels []string
	for k, o := range flagged {
		// Staggered heights keep the labels of close outliers apart.
		pts = append(pts, plotter.XY{X: o.Value, Y: top * (1.08 + 0.12*float64(k%4))})
		labels = append(labels, o.ID)
	}
	if len(pts) > 0 {
		sc, err := plotter.NewScatter(pts)
		if err != nil {
			return nil, err
		}
		sc.GlyphStyle.Color = colorOutlier
		sc.GlyphStyle.Shape = draw.TriangleGlyph{}
		sc.GlyphStyle.Radius = vg.Points(4)
		lb, err := plotter.NewLabels(plotter.XYLabels{XYs: pts, Labels: labels})
		if err != nil {
			return nil, err
		}
		for j := range lb.TextStyle {
			lb.TextStyle[j].Font = figure.Font(figure.SmallFontSize)
			lb.TextStyle[j].Rotation = math.Pi / 4
		}
		p.Add(sc, lb)
		k.Add(fmt.Sprintf("flagged outlier (> %g robust SD)", outlierSD), sc)
	}
	p.Y.Min, p.Y.Max = 0, top*1.7
	p.Y.Tick.Marker = plot.DefaultTicks{}
	return p, nil
}

type floats []float64

func (f floats) min() float64 {
	m := math.Inf(1)
	for _, v := range f {
		m = math.Min(m, v)
	}
	return m
}

func (f floats) max() float64 {
	m := math.Inf(-1)
	for _, v := range f {
		m = math.Max(m, v)
	}
	return m
}

func contains(list []string, s string) bool {
	for _, v := range list {
		if v == s {
			return true
		}
	}
	return false
}

// num formats x with three significant decimals, "–" for NaN.
func num(x float64) string {
	if math.IsNaN(x) {
		return "–"
	}
	return fmt.Sprintf("%.3g", x)
}

func pValue(p float64) string {
	if math.IsNaN(p) {
		return "–"
	}
	return fmt.Sprintf("%.3f", p)
}
