package report

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
)

// Build reads the run folder dir (ReadRun), draws its figures into
// dir/figures/, writes the fold-averaged edge importance as
// dir/importance.csv (when some model reported importance) and writes
// dir/report.html, replacing earlier ones. It returns the figures drawn.
func Build(dir string) ([]Figure, error) {
	r, err := ReadRun(dir)
	if err != nil {
		return nil, err
	}
	imp, err := r.ImportanceSummaries()
	if err != nil {
		return nil, err
	}
	filters := r.FilterSummaries()
	figs, err := r.Figures(imp, filters)
	if err != nil {
		return nil, err
	}
	figDir := filepath.Join(dir, FiguresDir)
	if err := os.MkdirAll(figDir, 0o755); err != nil {
		return nil, err
	}
	for _, f := range figs {
		if err := writeAtomic(filepath.Join(figDir, f.File), f.PNG); err != nil {
			return nil, err
		}
	}
	if len(r.Importance) > 0 {
		if err := writeAtomic(filepath.Join(dir, ImportanceFile), r.importanceCSV()); err != nil {
			return nil, err
		}
	}
	var page bytes.Buffer
	if err := r.WriteHTML(&page, figs, imp, filters); err != nil {
		return nil, fmt.Errorf("%s: %w", HTMLFile, err)
	}
	return figs, writeAtomic(filepath.Join(dir, HTMLFile), page.Bytes())
}

// Figures draws every figure of the run, in report order.
func (r *Run) Figures(imp []ModelImportance, filters []FilterSummary) ([]Figure, error) {
	var all []Figure
	for _, draw := range []func() ([]Figure, error){
		r.ComparisonFigures,
		r.ObservedFigures,
		r.LearningFigures,
		r.NullFigures,
		func() ([]Figure, error) { return r.ImportanceFigures(imp) },
		func() ([]Figure, error) { return r.FilterFigures(filters) },
	} {
		figs, err := draw()
		if err != nil {
			return nil, err
		}
		all = append(all, figs...)
	}
	if f, ok, err := r.CohortFigure(); err != nil {
		return nil, err
	} else if ok {
		all = append(all, f)
	}
	return all, nil
}
