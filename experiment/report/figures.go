package report

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette/moreland"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
)

// DPI is the resolution of every figure: a figure of w × h inches is
// w·DPI × h·DPI pixels.
const DPI = 96

// A Figure is one PNG image of a report.
type Figure struct {
	// File is the name under figures/, such as "observed-ridge-recall.png".
	File string
	// Section is the heading of the report the figure belongs under.
	Section string
	// Title and Caption describe it for the reader.
	Title, Caption string
	// Width and Height are the image size in pixels.
	Width, Height int
	PNG           []byte
}

// Sections of the report, in order.
const (
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
)

// render draws on a w × h inch white canvas and encodes it as PNG; it
// returns the PNG and its size in pixels.
func render(w, h float64, draw func(dc draw.Canvas)) ([]byte, int, int, error) {
	c := vgimg.NewWith(vgimg.UseWH(vg.Length(w)*vg.Inch, vg.Length(h)*vg.Inch), vgimg.UseDPI(DPI), vgimg.UseBackgroundColor(color.White))
	draw(drawCanvas(c))
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: c}).WriteTo(&buf); err != nil {
		return nil, 0, 0, err
	}
	b := c.Image().Bounds()
	return buf.Bytes(), b.Dx(), b.Dy(), nil
}

func drawCanvas(c *vgimg.Canvas) draw.Canvas { return draw.New(c) }

// figure renders one plot as a Figure of w × h inches.
func figure(file, section, title, caption string, w, h float64, p *plot.Plot) (Figure, error) {
	png, pw, ph, err := render(w, h, func(dc draw.Canvas) { p.Draw(dc) })
	if err != nil {
		return Figure{}, fmt.Errorf("figure %s: %w", file, err)
	}
	return Figure{File: file, Section: section, Title: title, Caption: caption, Width: pw, Height: ph, PNG: png}, nil
}

func newPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	p.Add(plotter.NewGrid())
	return p
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
	type key struct{ model, target string }
	var keys []key
	points := make(map[key]plotter.XYs)
	for _, row := range r.Rows {
		if math.IsNaN(row.Observed) || math.IsNaN(row.Predicted) {
			continue
		}
		k := key{row.Model, row.Target}
		if _, ok := points[k]; !ok {
			keys = append(keys, k)
		}
		points[k] = append(points[k], plotter.XY{X: row.Observed, Y: row.Predicted})
	}
	sort.Slice(keys, func(a, b int) bool {
		if keys[a].model != keys[b].model {
			return keys[a].model < keys[b].model
		}
		return keys[a].target < keys[b].target
	})
	var figs []Figure
	for _, k := range keys {
		xys := points[k]
		obs := make([]float64, len(xys))
		pred := make([]float64, len(xys))
		for i, xy := range xys {
			obs[i], pred[i] = xy.X, xy.Y
		}
		rv, mae := eval.Pearson(obs, pred), eval.MAE(obs, pred)
		title := fmt.Sprintf("%s — %s: r = %s, MAE = %s", k.model, k.target, num(rv), num(mae))
		p := newPlot(title, "observed "+k.target, "predicted "+k.target)
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
		p.Legend.Add("participant (pooled test folds)", sc)
		p.Legend.Add("identity", identity)
		alpha, beta := stat.LinearRegression(obs, pred, nil, false)
		if !math.IsNaN(alpha) && !math.IsNaN(beta) {
			x0, x1 := floats(obs).min(), floats(obs).max()
			fit, err := line(x0, alpha+beta*x0, x1, alpha+beta*x1, colorFit, false)
			if err != nil {
				return nil, err
			}
			p.Add(fit)
			p.Legend.Add(fmt.Sprintf("least squares: %s + %s·observed", num(alpha), num(beta)), fit)
		}
		p.Legend.Top, p.Legend.Left = true, true
		p.Y.Max = hi + 0.3*(hi-lo) // room for the legend
		caption := fmt.Sprintf("%d test predictions of %s for %s, pooled over folds and repeats. "+
			"Points on the dashed identity line are predicted exactly.", len(xys), k.model, k.target)
		if c := r.Experiment.CV.Confounds; len(c) > 0 {
			caption += fmt.Sprintf(" Scores are as in predictions.csv: residuals after regressing out %s, fitted on each training fold.",
				strings.Join(c, ", "))
		}
		f, err := figure(fileName("observed", k.model, k.target), SectionPredictions, title, caption, 6, 5, p)
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
	var targets []string
	for _, g := range r.Summary.Groups {
		if !contains(targets, g.Target) {
			targets = append(targets, g.Target)
		}
	}
	sort.Strings(targets)
	var figs []Figure
	for _, t := range targets {
		var groups []eval.Group
		for _, g := range r.Summary.Groups {
			if g.Target == t && len(g.Folds) > 0 {
				groups = append(groups, g)
			}
		}
		if len(groups) == 0 {
			continue
		}
		var row []*plot.Plot
		for _, m := range []eval.Metric{eval.MetricPearson, eval.MetricMAE} {
			p := newPlot(fmt.Sprintf("%s: %s per fold", t, m.Label()), "", m.Label())
			var names []string
			for i, g := range groups {
				names = append(names, g.Model)
				var vals plotter.Values
				var pts plotter.XYs
				for k, f := range g.Folds {
					v := f.Get(m)
					if math.IsNaN(v) {
						continue
					}
					vals = append(vals, v)
					// A fixed jitter spreads the points of one model.
					jitter := 0.25 * (float64(k%7)/6 - 0.5)
					pts = append(pts, plotter.XY{X: float64(i) + jitter, Y: v})
				}
				if len(vals) == 0 {
					continue
				}
				box, err := plotter.NewBoxPlot(vg.Points(22), float64(i), vals)
				if err != nil {
					return nil, err
				}
				box.GlyphStyle.Radius = 0
				sc, err := plotter.NewScatter(pts)
				if err != nil {
					return nil, err
				}
				sc.GlyphStyle.Color = plotutil.Color(i)
				sc.GlyphStyle.Radius = vg.Points(2.2)
				sc.GlyphStyle.Shape = draw.CircleGlyph{}
				p.Add(box, sc)
			}
			p.NominalX(names...)
			p.X.Tick.Label.Rotation = math.Pi / 6
			p.X.Tick.Label.XAlign = draw.XRight
			p.X.Tick.Label.YAlign = draw.YCenter
			row = append(row, p)
		}
		title := "Per-fold Pearson r and MAE on " + t
		caption := fmt.Sprintf("One point per test fold of every repeat (%d per model); boxes span the quartiles, "+
			"whiskers 1.5 interquartile ranges. Higher r and lower MAE are better. Folds share participants "+
			"across repeats, so the points are not independent.", len(groups[0].Folds))
		png, w, h, err := render(10, 4.5, func(dc draw.Canvas) {
			tiles := draw.Tiles{Rows: 1, Cols: len(row), PadX: vg.Millimeter * 6, PadTop: vg.Millimeter * 2, PadBottom: vg.Millimeter * 2, PadLeft: vg.Millimeter * 2, PadRight: vg.Millimeter * 2}
			canvases := plot.Align([][]*plot.Plot{row}, tiles, dc)
			for j, p := range row {
				p.Draw(canvases[0][j])
			}
		})
		if err != nil {
			return nil, err
		}
		figs = append(figs, Figure{File: fileName("comparison", t), Section: SectionComparison, Title: title, Caption: caption, Width: w, Height: h, PNG: png})
	}
	return figs, nil
}

// LearningFigures draws, for every model that trained in epochs, the
// training (solid) and inner-validation (dashed) loss per epoch of each
// fold, one colour per fold, with the early-stopping epoch (the last
// epoch marked best) as a dot. An ensemble draws one line per member in
// its fold's colour.
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
	var figs []Figure
	for _, m := range models {
		title := m + ": loss per epoch"
		p := newPlot(title, "epoch", "loss (standardized scores)")
		var best plotter.XYs
		hasValid := false
		yMax := math.Inf(-1)
		folds := make(map[unit]int) // colour index per fold
		members := 0
		for _, u := range order[m] {
			fold := unit{u.repeat, u.fold, 0}
			if _, ok := folds[fold]; !ok {
				folds[fold] = len(folds)
			}
			members = max(members, u.member)
		}
		for _, u := range order[m] {
			i := folds[unit{u.repeat, u.fold, 0}]
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
			col := plotutil.Color(i)
			l, err := plotter.NewLine(tr)
			if err != nil {
				return nil, err
			}
			l.Color = col
			p.Add(l)
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
		p.Legend.Add("training loss", trainKey)
		if hasValid {
			validKey, _ := line(0, 0, 1, 1, colorGuide, true)
			p.Legend.Add("inner-validation loss", validKey)
		}
		if len(best) > 0 {
			sc, err := plotter.NewScatter(best)
			if err != nil {
				return nil, err
			}
			sc.GlyphStyle.Shape = draw.CircleGlyph{}
			sc.GlyphStyle.Radius = vg.Points(3.5)
			sc.GlyphStyle.Color = color.Black
			p.Add(sc)
			p.Legend.Add("kept epoch (early stopping)", sc)
		}
		p.Legend.Top = true
		if !math.IsInf(yMax, 0) {
			p.Y.Min = 0
			p.Y.Max = 1.3 * yMax
		}
		caption := fmt.Sprintf("%d folds (all repeats), one colour per fold. The loss is computed on the "+
			"standardized scores each training fold fitted. The dot marks the epoch whose weights were kept.", len(folds))
		if members > 0 {
			caption += fmt.Sprintf(" Each fold trained an ensemble of %d networks, one line per network, each "+
				"stopped early on its own part of the training fold.", members)
		}
		f, err := figure(fileName("learning", m), SectionLearning, title, caption, 7, 4.5, p)
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
// title.
func (r *Run) NullFigures() ([]Figure, error) {
	var figs []Figure
	for _, n := range r.Nulls {
		var vals plotter.Values
		for _, v := range n.Null {
			if x := v.Get(eval.MetricPearsonWithin); !math.IsNaN(x) {
				vals = append(vals, x)
			}
		}
		if len(vals) == 0 {
			continue
		}
		obs := n.Observed.Get(eval.MetricPearsonWithin)
		pv := n.P.Get(eval.MetricPearsonWithin)
		title := fmt.Sprintf("%s — %s: observed r = %s, p = %s", n.Model, n.Target, num(obs), pValue(pv))
		p := newPlot(title, "r within folds", "permutations")
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
		if !math.IsNaN(obs) {
			l, err := line(obs, 0, obs, top*1.05, colorFit, false)
			if err != nil {
				return nil, err
			}
			l.Width = vg.Points(2)
			p.Add(l)
			p.Legend.Add("observed", l)
			p.Legend.Add(fmt.Sprintf("null (%d permutations)", len(n.Null)), h)
			p.Legend.Top, p.Legend.Left = true, true
			p.Y.Max = top * 1.35
			p.X.Max = math.Max(p.X.Max, obs) + 0.05*(p.X.Max-p.X.Min)
			p.X.Min = math.Min(p.X.Min, obs) - 0.05*(p.X.Max-p.X.Min)
		}
		caption := fmt.Sprintf("The whole cross-validation of %s repeated with the scores permuted %d times. "+
			"p = (1 + #{null r ≥ observed r}) / (1 + permutations).", n.Model, len(n.Null))
		f, err := figure(fileName("null", n.Model, n.Target), SectionNulls, title, caption, 6, 4, p)
		if err != nil {
			return nil, err
		}
		figs = append(figs, f)
	}
	return figs, nil
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
func heatMap(title, xLabel, yLabel string, xNames, yNames []string, rows, cols int, z []float64, w, h float64) ([]byte, int, int, error) {
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
	p.Add(hm)
	p.X.Tick.Marker = labelTicks{xNames, 24}
	p.Y.Tick.Marker = labelTicks{yNames, 32}
	p.X.Tick.Label.Rotation = math.Pi / 2
	p.X.Tick.Label.XAlign = draw.XRight
	p.X.Tick.Label.YAlign = draw.YCenter
	p.Y.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
	small := vg.Points(7)
	p.X.Tick.Label.Font.Size = small
	p.Y.Tick.Label.Font.Size = small

	bar := plot.New()
	bar.HideX()
	bar.Y.Padding = 0
	bar.Title.Text = " "
	bar.Add(&plotter.ColorBar{ColorMap: cm, Vertical: true})
	return render(w, h, func(dc draw.Canvas) {
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
	for i, name := range names {
		st := stats[i]
		if len(values[i]) > 1 {
			p, err := cohortHistogram(name, values[i], c.Outliers, c.OutlierSD)
			if err != nil {
				return Figure{}, false, err
			}
			row = append(row, p)
			continue
		}
		p := newPlot(name, name, "")
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
		p.Legend.Add("range", rangeLine)
		p.Legend.Add("mean ± SD", box)
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
			for k := range lb.TextStyle {
				lb.TextStyle[k].Font.Size = vg.Points(7)
				lb.TextStyle[k].Rotation = math.Pi / 4
			}
			p.Add(sc, lb)
			p.Legend.Add(fmt.Sprintf("flagged outlier (> %g robust SD)", c.OutlierSD), sc)
		}
		p.Y.Min, p.Y.Max = -1.6, 2.2
		row = append(row, p)
	}
	title := "Cohort quality"
	caption := fmt.Sprintf("Per-participant measures of the %d included participants, before preprocessing "+
		"(histograms; runs made before skein kept each participant's value show range and mean ± SD); red "+
		"triangles mark the participants flagged as outliers (more than %g robust SDs from the median). "+
		"Outliers are flagged, not excluded.", c.Included, c.OutlierSD)
	png, w, h, err := render(3.6*float64(len(row)), 3.2, func(dc draw.Canvas) {
		tiles := draw.Tiles{Rows: 1, Cols: len(row), PadX: vg.Millimeter * 6, PadTop: vg.Millimeter * 2, PadBottom: vg.Millimeter * 2, PadLeft: vg.Millimeter * 2, PadRight: vg.Millimeter * 4}
		canvases := plot.Align([][]*plot.Plot{row}, tiles, dc)
		for j, p := range row {
			p.Draw(canvases[0][j])
		}
	})
	if err != nil {
		return Figure{}, false, err
	}
	return Figure{File: "cohort.png", Section: SectionCohort, Title: title, Caption: caption, Width: w, Height: h, PNG: png}, true, nil
}

// cohortHistogram draws the distribution of one quality measure over the
// participants with its flagged outliers marked and labelled.
func cohortHistogram(name string, values []float64, outliers []data.Outlier, outlierSD float64) (*plot.Plot, error) {
	p := newPlot(name, name, "participants")
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
		for k := range lb.TextStyle {
			lb.TextStyle[k].Font.Size = vg.Points(7)
			lb.TextStyle[k].Rotation = math.Pi / 4
		}
		p.Add(sc, lb)
		p.Legend.Add(fmt.Sprintf("flagged outlier (> %g robust SD)", outlierSD), sc)
		p.Legend.Top, p.Legend.Left = true, true
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
