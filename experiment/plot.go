package experiment

import (
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/internal/figure"
)

// Size of the plots in inches: the full width of a two-column journal
// page, drawn at figure.DPI as PNG and in the same size as SVG, in the
// report's font with the key under the data.
const (
	plotWidth  = figure.DoubleColumn
	plotHeight = 3.5
)

// PlotHistory draws the headline r (r within folds) of every experiment,
// model and target of the history over the run dates, one line per
// experiment, model and target (rows of different experiments never share
// a line), and writes it to png as a PNG image (7 × 3.5 in at 150 dpi)
// and, when svg is not nil, to svg as SVG. The key under the plot names
// the model and target, and the experiment file too when the history
// holds more than one. Rows with an undefined r are left out of the
// lines. It is an error to pass no rows.
func PlotHistory(png, svg io.Writer, rows []HistoryRow) error {
	if len(rows) == 0 {
		return errors.New("runs: no history to plot")
	}
	keys, series, labels := historyLines(rows)
	p := figure.NewPlot("r within folds of each run (research software, not a diagnostic device)", "run date (UTC)", "r within folds")
	p.X.Tick.Marker = plot.TimeTicks{Format: "2006-01-02"}
	var key figure.Key
	for i, k := range keys {
		xys := series[k]
		sort.SliceStable(xys, func(a, b int) bool { return xys[a].X < xys[b].X })
		if err := addLine(p, &key, i, labels[i], xys); err != nil {
			return err
		}
	}
	if p.X.Max-p.X.Min < 86400 { // one night: show a day either side
		p.X.Min -= 86400
		p.X.Max += 86400
	}
	padAxes(p)
	return writePlot(png, svg, p, key)
}

// historyKey is one line of the history plot.
type historyKey struct{ experiment, model, target string }

// historyLines gathers the rows of a history into the lines of its plot,
// one per experiment, model and target, ordered by them: the points (run
// date in Unix seconds, r within folds; undefined r left out) and the
// legend label of each.
func historyLines(rows []HistoryRow) ([]historyKey, map[historyKey]plotter.XYs, []string) {
	series := make(map[historyKey]plotter.XYs)
	var keys []historyKey
	experiments := make(map[string]bool)
	for _, r := range rows {
		k := historyKey{r.Experiment, r.Model, r.Target}
		experiments[r.Experiment] = true
		if _, ok := series[k]; !ok {
			keys = append(keys, k)
			series[k] = plotter.XYs{}
		}
		if !math.IsNaN(r.RWithinFolds) {
			series[k] = append(series[k], plotter.XY{X: float64(r.Date.Unix()), Y: r.RWithinFolds})
		}
	}
	sort.SliceStable(keys, func(i, j int) bool {
		a, b := keys[i], keys[j]
		if a.experiment != b.experiment {
			return a.experiment < b.experiment
		}
		if a.model != b.model {
			return a.model < b.model
		}
		return a.target < b.target
	})
	labels := make([]string, len(keys))
	for i, k := range keys {
		labels[i] = k.model + " · " + k.target
		if len(experiments) > 1 {
			name := "(experiment not recorded)"
			if k.experiment != "" {
				name = strings.TrimSuffix(filepath.Base(k.experiment), filepath.Ext(k.experiment))
			}
			labels[i] = name + " · " + labels[i]
		}
	}
	return keys, series, labels
}

// PlotSampleSize draws the sample-size curve: for every model and target,
// the mean over test folds of Pearson r against the mean training-subset
// size of each fraction, with bars of ± one sample SD over the folds
// (series shifted sideways by at most 1% of the size range so that bars
// stay apart; the axes hold every bar), and writes it to png as a PNG
// image and, when svg is not nil, to svg as SVG, as PlotHistory does. It
// is an error to pass no rows.
func PlotSampleSize(png, svg io.Writer, rows []eval.SampleSizeRow) error {
	if len(rows) == 0 {
		return errors.New("runs: no sample-size curve to plot")
	}
	type point struct{ n, r []float64 }
	points := make(map[[2]string]map[float64]*point)
	var keys [][2]string
	for _, r := range rows {
		k := [2]string{r.Model, r.Target}
		if points[k] == nil {
			points[k] = make(map[float64]*point)
			keys = append(keys, k)
		}
		pt := points[k][r.Fraction]
		if pt == nil {
			pt = &point{}
			points[k][r.Fraction] = pt
		}
		pt.n = append(pt.n, float64(r.NTrain))
		if !math.IsNaN(r.Pearson) {
			pt.r = append(pt.r, r.Pearson)
		}
	}
	sortKeys(keys)
	// Series are shifted sideways by up to ±1% of the size range so that
	// their error bars do not hide one another.
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, r := range rows {
		lo, hi = min(lo, float64(r.NTrain)), max(hi, float64(r.NTrain))
	}
	shift := func(i int) float64 {
		if len(keys) < 2 {
			return 0
		}
		return (float64(i)/float64(len(keys)-1) - 0.5) * 0.02 * (hi - lo)
	}
	p := figure.NewPlot("Accuracy against training-set size (research software, not a diagnostic device)",
		"participants in the training subset (mean over folds)", "Pearson r on the test folds (mean ± SD)")
	var key figure.Key
	for i, k := range keys {
		var fractions []float64
		for f := range points[k] {
			fractions = append(fractions, f)
		}
		sort.Float64s(fractions)
		var curve struct {
			plotter.XYs
			plotter.YErrors
		}
		for _, f := range fractions {
			pt := points[k][f]
			if len(pt.r) == 0 {
				continue
			}
			mean, sd := meanSD(pt.r)
			n, _ := meanSD(pt.n)
			curve.XYs = append(curve.XYs, plotter.XY{X: n + shift(i), Y: mean})
			curve.YErrors = append(curve.YErrors, struct{ Low, High float64 }{sd, sd})
		}
		if err := addLine(p, &key, i, k[0]+" · "+k[1], curve.XYs); err != nil {
			return err
		}
		if len(curve.XYs) > 0 {
			bars, err := plotter.NewYErrorBars(curve)
			if err != nil {
				return err
			}
			bars.Color = plotutil.Color(i)
			p.Add(bars)
		}
	}
	padAxes(p)
	return writePlot(png, svg, p, key)
}

// padAxes widens both ranges by 4% on each side (0.05 at least for y), so
// that the outermost points and their bars, which the ranges hold, are not
// cut by the frame.
func padAxes(p *plot.Plot) {
	figure.PadRange(&p.X, p.X.Min, p.X.Max, 0.04)
	pad := max(0.04*(p.Y.Max-p.Y.Min), 0.05)
	p.Y.Min -= pad
	p.Y.Max += pad
}

// addLine adds the line of series i, named label in key.
func addLine(p *plot.Plot, key *figure.Key, i int, label string, xys plotter.XYs) error {
	if len(xys) == 0 {
		return nil
	}
	line, points, err := plotter.NewLinePoints(xys)
	if err != nil {
		return fmt.Errorf("runs: %s: %w", label, err)
	}
	c := plotutil.Color(i)
	line.Color = c
	line.Dashes = plotutil.Dashes(i / 7)
	points.Color = c
	points.Shape = plotutil.Shape(i)
	p.Add(line, points)
	key.Add(label, line, points)
	return nil
}

// writePlot draws p with key under it and writes it to png and, when not
// nil, to svg.
func writePlot(png, svg io.Writer, p *plot.Plot, key figure.Key) error {
	img, err := figure.Panels(plotWidth, plotHeight, []*plot.Plot{p}, key)
	if err != nil {
		return err
	}
	if _, err := png.Write(img.PNG); err != nil {
		return err
	}
	if svg != nil {
		_, err = svg.Write(img.SVG)
	}
	return err
}

func sortKeys(keys [][2]string) {
	sort.Slice(keys, func(i, j int) bool {
		if keys[i][0] != keys[j][0] {
			return keys[i][0] < keys[j][0]
		}
		return keys[i][1] < keys[j][1]
	})
}

// meanSD returns the mean and the sample SD (n − 1), 0 for one value.
func meanSD(x []float64) (mean, sd float64) {
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	if len(x) < 2 {
		return mean, 0
	}
	var ss float64
	for _, v := range x {
		ss += (v - mean) * (v - mean)
	}
	return mean, math.Sqrt(ss / float64(len(x)-1))
}
