package experiment

import (
	"fmt"
	"slices"
	"sort"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/train"
)

// SampleSize asks for the sample-size curve: each model is trained again on
// nested subsets of every training fold and tested on the same test fold,
// which shows how accuracy depends on the number of training participants
// (small samples inflate and scatter brain–behaviour effects: Marek et al.
// 2022, "Reproducible brain-wide association studies require thousands of
// individuals", Nature). It is the [sample_size] table of an experiment
// file.
type SampleSize struct {
	// Fractions are the sizes of the training subsets as fractions of the
	// training fold, each in (0, 1], ascending. Empty (the default) draws
	// no curve.
	Fractions []float64 `toml:"fractions"`
	// Models names the models trained on subsets; empty (the default)
	// trains all.
	Models []string `toml:"models"`
}

// SetDefaults fills every unset field with its documented default.
func (s *SampleSize) SetDefaults() {
	if s.Fractions == nil {
		s.Fractions = []float64{}
	}
	if s.Models == nil {
		s.Models = []string{}
	}
}

// Validate reports the first setting that cannot work, naming its key.
func (s SampleSize) Validate(models []train.ModelConfig) error {
	for i, f := range s.Fractions {
		if !(f > 0 && f <= 1) {
			return fmt.Errorf("sample_size.fractions[%d]: want a fraction in (0, 1], found %v", i, f)
		}
		if i > 0 && f <= s.Fractions[i-1] {
			return fmt.Errorf("sample_size.fractions[%d]: want ascending fractions, found %v after %v", i, f, s.Fractions[i-1])
		}
	}
	for _, name := range s.Models {
		if !slices.ContainsFunc(models, func(m train.ModelConfig) bool { return m.Name == name }) {
			return fmt.Errorf("sample_size.models: no model is named %q", name)
		}
	}
	return nil
}

// SampleSizeCurve scores the runs of train.Runner.RunSampleSizes fold by
// fold. Rows are ordered by model, target, fraction, repeat and fold.
func SampleSizeCurve(runs []train.SampleSizeRun) []eval.SampleSizeRow {
	var rows []eval.SampleSizeRow
	for _, run := range runs {
		nTrain := make(map[[2]int]int)
		for _, s := range run.Splits {
			nTrain[[2]int{s.Repeat, s.Fold}] = len(s.Train)
		}
		type key struct {
			model, target string
			repeat, fold  int
		}
		pairs := make(map[key][2][]float64)
		var keys []key
		for _, p := range run.Predictions {
			k := key{p.Model, p.Target, p.Repeat, p.Fold}
			v, ok := pairs[k]
			if !ok {
				keys = append(keys, k)
			}
			v[0] = append(v[0], p.Observed)
			v[1] = append(v[1], p.Predicted)
			pairs[k] = v
		}
		for _, k := range keys {
			obs, pred, _ := eval.CompletePairs(pairs[k][0], pairs[k][1])
			rows = append(rows, eval.SampleSizeRow{
				Model: k.model, Target: k.target, Fraction: run.Fraction,
				NTrain: nTrain[[2]int{k.repeat, k.fold}], Repeat: k.repeat, Fold: k.fold,
				Pearson: eval.Pearson(obs, pred), MAE: eval.MAE(obs, pred),
			})
		}
	}
	return sortSampleSize(rows)
}

// sortSampleSize sorts the rows of a sample-size curve by model, target,
// fraction, repeat and fold, the order of SampleSizeFile.
func sortSampleSize(rows []eval.SampleSizeRow) []eval.SampleSizeRow {
	sort.SliceStable(rows, func(a, b int) bool {
		ra, rb := rows[a], rows[b]
		switch {
		case ra.Model != rb.Model:
			return ra.Model < rb.Model
		case ra.Target != rb.Target:
			return ra.Target < rb.Target
		case ra.Fraction != rb.Fraction:
			return ra.Fraction < rb.Fraction
		case ra.Repeat != rb.Repeat:
			return ra.Repeat < rb.Repeat
		}
		return ra.Fold < rb.Fold
	})
	return rows
}
