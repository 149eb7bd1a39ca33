package report

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/internal/atomicfile"
)

// Build reads the run folder dir (ReadRun), draws its figures into
// dir/figures/, each as PNG and SVG, writes the fold-averaged edge importance as
// dir/importance.csv (when some model reported importance) and writes
// dir/report.html, replacing earlier ones. It returns the figures drawn.
//
// A figure that cannot be drawn does not stop the others: report.html is
// still written, lists the problem at its top, and Build returns the
// figures drawn with an error joining every problem.
func Build(dir string) ([]Figure, error) {
	r, err := ReadRun(dir)
	if err != nil {
		return nil, err
	}
	var problems []error
	imp, err := r.ImportanceSummaries()
	if err != nil {
		problems = append(problems, fmt.Errorf("edge importance: %w", err))
	}
	filters := r.FilterSummaries()
	figs, drawProblems := r.Figures(imp, filters)
	uniqueFiles(figs)
	problems = append(problems, drawProblems...)
	figDir := filepath.Join(dir, experiment.FiguresDir)
	if err := os.MkdirAll(figDir, 0o755); err != nil {
		return nil, err
	}
	for _, f := range figs {
		if err := atomicfile.WriteFile(filepath.Join(figDir, f.File), f.PNG); err != nil {
			return nil, err
		}
		if err := atomicfile.WriteFile(filepath.Join(figDir, f.SVGFile()), f.SVG); err != nil {
			return nil, err
		}
	}
	if len(r.Importance) > 0 && len(imp) > 0 {
		if err := atomicfile.WriteFile(filepath.Join(dir, experiment.ImportanceFile), r.importanceCSV()); err != nil {
			return nil, err
		}
	}
	var page bytes.Buffer
	if err := r.WriteHTML(&page, figs, imp, filters, problems); err != nil {
		return nil, fmt.Errorf("%s: %w", experiment.HTMLFile, err)
	}
	if err := atomicfile.WriteFile(filepath.Join(dir, experiment.HTMLFile), page.Bytes()); err != nil {
		return nil, err
	}
	return figs, errors.Join(problems...)
}

// Figures draws every figure of the run, in report order. A kind of figure
// that fails (an error, or a panic of the plotting library) is left out
// and its failure returned among problems; the other kinds are drawn.
func (r *Run) Figures(imp []ModelImportance, filters []FilterSummary) (figs []Figure, problems []error) {
	cohort := func() ([]Figure, error) {
		f, ok, err := r.CohortFigure()
		if err != nil || !ok {
			return nil, err
		}
		return []Figure{f}, nil
	}
	for _, kind := range []struct {
		section string
		draw    func() ([]Figure, error)
	}{
		{SectionAnswer, r.AnswerFigures},
		{SectionComparison, r.ComparisonFigures},
		{SectionPredictions, r.ObservedFigures},
		{"ROC curves", r.ROCFigures},
		{"Calibration plots", r.CalibrationFigures},
		{SectionLearning, r.LearningFigures},
		{SectionNulls, r.NullFigures},
		{SectionImportance, func() ([]Figure, error) { return r.ImportanceFigures(imp) }},
		{SectionFilters, func() ([]Figure, error) { return r.FilterFigures(filters) }},
		{SectionCohort, cohort},
	} {
		drawn, err := drawSafely(kind.draw)
		if err != nil {
			problems = append(problems, fmt.Errorf("%s: %w", kind.section, err))
			continue
		}
		figs = append(figs, drawn...)
	}
	return figs, problems
}

// drawSafely calls draw, turning a panic into an error.
func drawSafely(draw func() ([]Figure, error)) (figs []Figure, err error) {
	defer func() {
		if p := recover(); p != nil {
			figs, err = nil, fmt.Errorf("drawing failed: %v", p)
		}
	}()
	return draw()
}

// uniqueFiles gives figures whose file names coincide (names such as
// "fc+net" and "fc_net" map to the same file) the suffixes -2, -3, ...
// in their order, so that no figure overwrites another.
func uniqueFiles(figs []Figure) {
	used := make(map[string]bool, len(figs))
	for i := range figs {
		base := strings.TrimSuffix(figs[i].File, ".png")
		name := figs[i].File
		for k := 2; used[strings.ToLower(name)]; k++ {
			name = fmt.Sprintf("%s-%d.png", base, k)
		}
		used[strings.ToLower(name)] = true
		figs[i].File = name
	}
}
