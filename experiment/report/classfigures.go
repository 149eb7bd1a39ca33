package report

import (
	"fmt"
	"image/color"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/internal/figure"
)

// SectionLabel returns the heading of the report's section on the label
// target: its ROC curves, calibration plots and confusion matrices. A run
// without labels has no such section.
func SectionLabel(target string) string { return "Classification of " + target }

// classPanels returns the classes a label's figures draw a panel for: the
// positive class (index 1) of a binary label, each class against the rest
// for more classes.
func classPanels(lt LabelTarget) []int {
	if len(lt.Classes) == 2 {
		return []int{1}
	}
	panels := make([]int, len(lt.Classes))
	for k := range panels {
		panels[k] = k
	}
	return panels
}

// classFigureSize returns the size in inches of a figure with the panels
// of lt: one column for a binary label, two for more classes.
func classFigureSize(lt LabelTarget) (w, h float64) {
	if len(lt.Classes) == 2 {
		return figure.SingleColumn, 3.6
	}
	return figure.DoubleColumn, 3.2
}

// oneVsRest returns, for the rows whose class is known, whether each is of
// class k and its probability of class k.
func oneVsRest(rows []ClassPrediction, k int) (positive []bool, score []float64) {
	for _, c := range rows {
		if c.Observed < 0 {
			continue
		}
		positive = append(positive, c.Observed == k)
		score = append(score, c.Proba[k])
	}
	return positive, score
}

// repeatsOf returns the repeats of rows in increasing order.
func repeatsOf(rows []ClassPrediction) []int {
	var out []int
	for _, c := range rows {
		if !slices.Contains(out, c.Repeat) {
			out = append(out, c.Repeat)
		}
	}
	slices.Sort(out)
	return out
}

// modelColor is the colour of the model at place i of a figure (Okabe &
// Ito's colour-blind-safe palette, as the folds of the learning curves).
func modelColor(i int) color.Color { return foldColors[i%len(foldColors)] }

// faded returns c drawn at low opacity, for the curves of single repeats
// behind the pooled one.
func faded(c color.Color) color.Color {
	r, g, b, _ := c.RGBA()
	return color.NRGBA{R: uint8(r >> 8), G: uint8(g >> 8), B: uint8(b >> 8), A: 0x70}
}

// rocLine returns the ROC curve of score as a predictor of positive as a
// line, nil when it is undefined (a class absent).
func rocLine(positive []bool, score []float64) (*plotter.Line, error) {
	fpr, tpr, _ := eval.ROCCurve(positive, score)
	xys := make(plotter.XYs, len(fpr))
	for i := range fpr {
		if math.IsNaN(fpr[i]) || math.IsNaN(tpr[i]) {
			return nil, nil
		}
		xys[i] = plotter.XY{X: fpr[i], Y: tpr[i]}
	}
	return plotter.NewLine(xys)
}

// unitSquare sets both axes of p to [0, 1] with a small margin.
func unitSquare(p *plot.Plot) {
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 1, 0, 1
	figure.PadRange(&p.X, 0, 1, 0.02)
	figure.PadRange(&p.Y, 0, 1, 0.02)
}

// ROCFigures draws, for every label of the run, the ROC curve of every
// model (eval.ROCCurve): the false positive rate (1 − specificity) and the
// true positive rate (sensitivity) of every threshold on the predicted
// probability, from the test predictions pooled over folds and repeats (a
// thick line; with several repeats, each repeat's pooled folds as a thin
// faded line behind it), with the diagonal of chance. The key gives each
// model's AUC of the pooled predictions the curve shows (eval.ROCAUC; for
// more than two classes the macro one-vs-rest AUC, eval.OneVsRestAUC),
// labelled pooled: the headline AUC within folds (eval.AUCWithinFolds) is
// in the tables. A binary label
// has one panel, for its positive class (class index 1); a label of K > 2
// classes has K, each class against the rest. A run without labels draws
// none.
func (r *Run) ROCFigures() ([]Figure, error) {
	var figs []Figure
	for _, lt := range r.Labels {
		models, byModel := r.labelPredictions(lt.Name)
		if len(models) == 0 {
			continue
		}
		var row []*plot.Plot
		var k figure.Key
		multiRepeat := false
		for pi, class := range classPanels(lt) {
			title := fmt.Sprintf("%s: %s against the rest", lt.Name, lt.Classes[class])
			if len(lt.Classes) == 2 {
				title = fmt.Sprintf("%s: %s (positive) against %s", lt.Name, lt.Classes[1], lt.Classes[0])
			}
			p := figure.NewPlot(title, "false positive rate (1 − specificity)", "true positive rate (sensitivity)")
			chance, err := line(0, 0, 1, 1, colorGuide, true)
			if err != nil {
				return nil, err
			}
			p.Add(chance)
			for mi, m := range models {
				rows := byModel[m]
				col := modelColor(mi)
				if repeats := repeatsOf(rows); len(repeats) > 1 {
					multiRepeat = true
					for _, rep := range repeats {
						var sub []ClassPrediction
						for _, c := range rows {
							if c.Repeat == rep {
								sub = append(sub, c)
							}
						}
						l, err := rocLine(oneVsRest(sub, class))
						if err != nil {
							return nil, err
						}
						if l != nil {
							l.Color = faded(col)
							l.Width = vg.Points(0.6)
							p.Add(l)
						}
					}
				}
				positive, score := oneVsRest(rows, class)
				l, err := rocLine(positive, score)
				if err != nil {
					return nil, err
				}
				if l != nil {
					l.Color = col
					l.Width = vg.Points(1.5)
					p.Add(l)
				}
				if pi == 0 {
					labels, proba := classArrays(rows, len(lt.Classes))
					auc, what := eval.OneVsRestAUC(labels, proba), "pooled AUC"
					if len(lt.Classes) == 2 {
						auc = eval.ROCAUC(positive, score)
					} else {
						what = "pooled macro AUC"
					}
					key, err := line(0, 0, 1, 1, col, false)
					if err != nil {
						return nil, err
					}
					key.Width = vg.Points(1.5)
					k.Add(fmt.Sprintf("%s: %s %s", m, what, num(auc)), key)
				}
			}
			unitSquare(p)
			row = append(row, p)
		}
		chanceKey, err := line(0, 0, 1, 1, colorGuide, true)
		if err != nil {
			return nil, err
		}
		k.Add("chance (AUC 0.5)", chanceKey)
		title := "ROC curves of " + lt.Name
		caption := fmt.Sprintf("Test predictions of %s pooled over folds and repeats (a participant once per repeat), "+
			"one thick line per model", lt.Name)
		if multiRepeat {
			caption += "; thin faded lines are the single repeats"
		}
		if len(lt.Classes) == 2 {
			caption += fmt.Sprintf(". Each point is a threshold on the probability of %[1]s: the share of class %[2]s "+
				"called %[1]s (false positive rate) against the share of class %[1]s found (sensitivity). The AUC is the "+
				"probability that a random participant of class %[1]s gets a higher probability of %[1]s than one of "+
				"class %[2]s, ties counting half; the key gives it for the pooled curve (pooled AUC), which ranks "+
				"participants of different folds against each other and is biased low when the folds are not "+
				"stratified on %[3]s; the headline AUC within folds, which ranks only participants of one test fold, "+
				"is in the tables.", lt.Classes[1], lt.Classes[0], lt.Name)
		} else {
			caption += fmt.Sprintf(". One panel per class of %s against the other classes, scored by the probability "+
				"of that class; the key gives the mean of the %d one-vs-rest AUCs of the pooled curves (pooled macro AUC); "+
				"the headline AUC within folds, which ranks only participants of one test fold, is in the tables.", strings.Join(lt.Classes, ", "), len(lt.Classes))
		}
		caption += " The dashed diagonal is chance."
		w, h := classFigureSize(lt)
		f, err := drawFigure(fileName("roc", lt.Name), SectionLabel(lt.Name), title, caption, w, h, row, k)
		if err != nil {
			return nil, err
		}
		figs = append(figs, f)
	}
	return figs, nil
}

// calibrationBins returns the number of equal-width bins of a calibration
// plot of n predictions: 10, or 5 below 100 predictions, so that a bin
// holds some participants (common practice, no source).
func calibrationBins(n int) int {
	if n < 100 {
		return 5
	}
	return 10
}

// CalibrationFigures draws, for every label of the run, the calibration
// (reliability) plot of every model: the test predictions pooled over
// folds and repeats are cut into equal-width bins of predicted probability
// (eval.Calibration; calibrationBins), and each bin that holds
// predictions is a point at its mean predicted probability and the share
// of its participants that belong to the class, joined by a line per
// model, with the diagonal of perfect calibration. Panels are as in
// ROCFigures: the positive class of a binary label, each class against the
// rest for more classes. A run without labels draws none.
func (r *Run) CalibrationFigures() ([]Figure, error) {
	var figs []Figure
	for _, lt := range r.Labels {
		models, byModel := r.labelPredictions(lt.Name)
		if len(models) == 0 {
			continue
		}
		var row []*plot.Plot
		var k figure.Key
		var binsUsed []int
		for pi, class := range classPanels(lt) {
			title := fmt.Sprintf("%s: %s", lt.Name, lt.Classes[class])
			p := figure.NewPlot(title, "mean predicted probability of "+lt.Classes[class], "observed share of "+lt.Classes[class])
			diagonal, err := line(0, 0, 1, 1, colorGuide, true)
			if err != nil {
				return nil, err
			}
			p.Add(diagonal)
			for mi, m := range models {
				positive, prob := oneVsRest(byModel[m], class)
				bins := calibrationBins(len(prob))
				if !slices.Contains(binsUsed, bins) {
					binsUsed = append(binsUsed, bins)
				}
				var xys plotter.XYs
				for _, b := range eval.Calibration(positive, prob, bins) {
					xys = append(xys, plotter.XY{X: b.MeanPredicted, Y: b.ObservedRate})
				}
				if len(xys) == 0 {
					continue
				}
				col := modelColor(mi)
				l, err := plotter.NewLine(xys)
				if err != nil {
					return nil, err
				}
				l.Color = col
				l.Width = vg.Points(1.2)
				sc, err := plotter.NewScatter(xys)
				if err != nil {
					return nil, err
				}
				sc.GlyphStyle.Color = col
				sc.GlyphStyle.Radius = vg.Points(2.2)
				sc.GlyphStyle.Shape = draw.CircleGlyph{}
				if len(xys) > 1 {
					p.Add(l)
				}
				p.Add(sc)
				if pi == 0 {
					k.Add(m, l, sc)
				}
			}
			unitSquare(p)
			row = append(row, p)
		}
		diagonalKey, err := line(0, 0, 1, 1, colorGuide, true)
		if err != nil {
			return nil, err
		}
		k.Add("perfect calibration", diagonalKey)
		slices.Sort(binsUsed)
		binWords := make([]string, len(binsUsed))
		for i, b := range binsUsed {
			binWords[i] = fmt.Sprint(b)
		}
		title := "Calibration of " + lt.Name
		caption := fmt.Sprintf("Test predictions of %s pooled over folds and repeats, cut into %s equal-width bins of "+
			"predicted probability (10, or 5 for fewer than 100 predictions; empty bins left out). Each point is one bin: "+
			"its mean predicted probability against the share of its participants that have the class. Points on the "+
			"dashed diagonal are calibrated; below it the predicted probabilities of the class are too high, above it too low. "+
			"Bins of few participants are noisy.", lt.Name, strings.Join(binWords, " or "))
		if len(lt.Classes) > 2 {
			caption += " One panel per class against the other classes."
		}
		w, h := classFigureSize(lt)
		f, err := drawFigure(fileName("calibration", lt.Name), SectionLabel(lt.Name), title, caption, w, h, row, k)
		if err != nil {
			return nil, err
		}
		figs = append(figs, f)
	}
	return figs, nil
}
