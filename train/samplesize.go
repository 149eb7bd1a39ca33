package train

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"github.com/skein-neuro/skein/model"
)

// SampleSizeRun is the cross-validation of the chosen models with every
// training fold cut down to one fraction.
type SampleSizeRun struct {
	Fraction float64
	// Splits are the run's splits with Train cut to the subset; Test is
	// the full test fold.
	Splits []Split
	// Predictions are ordered as Result.Predictions.
	Predictions []model.Prediction
}

// SubsetSplits returns, for each fraction, the splits with every training
// fold cut to a nested subset: the training participants' groups (single
// participants without a grouping column) are shuffled once per split,
// seeded by seed, repeat and fold, and the subset for fraction f is the
// shortest prefix of that order whose size is closest to f times the
// training fold (at least one group). Groups are never cut, each subset
// holds the smaller ones, and a subset is never larger than its fold.
// groups is as Folds.Groups (nil for none).
func SubsetSplits(splits []Split, groups []string, fractions []float64, seed int64) [][]Split {
	out := make([][]Split, len(fractions))
	for _, s := range splits {
		var units [][]int
		index := make(map[string]int)
		for _, i := range s.Train {
			key := fmt.Sprint(i)
			if groups != nil {
				key = groups[i]
			}
			u, ok := index[key]
			if !ok {
				u = len(units)
				index[key] = u
				units = append(units, nil)
			}
			units[u] = append(units[u], i)
		}
		h := unitSeed(seed, "sample_size", s.Repeat, s.Fold)
		rng := rand.New(rand.NewPCG(h, 0x5a3d1e))
		rng.Shuffle(len(units), func(a, b int) { units[a], units[b] = units[b], units[a] })
		cum := make([]int, len(units)+1) // cum[k]: participants in the first k units
		for k, u := range units {
			cum[k+1] = cum[k] + len(u)
		}
		for fi, f := range fractions {
			want := f * float64(len(s.Train))
			best := 1
			for k := 2; k <= len(units); k++ {
				if math.Abs(float64(cum[k])-want) < math.Abs(float64(cum[best])-want) {
					best = k
				}
			}
			var train []int
			for _, u := range units[:best] {
				train = append(train, u...)
			}
			slices.Sort(train)
			out[fi] = append(out[fi], Split{Repeat: s.Repeat, Fold: s.Fold, Train: train, Test: s.Test})
		}
	}
	return out
}

// RunSampleSizes cross-validates the named models (all when names is
// empty) once per fraction, on the run's splits with each training fold cut to
// the nested subsets of SubsetSplits. Target scaling, confound regression
// and inner validation are fitted on each subset alone; units are seeded
// as in Run, so the fraction 1 reproduces Run's predictions. Nothing is
// checkpointed or saved.
func (r *Runner) RunSampleSizes(ctx context.Context, fractions []float64, names []string) ([]SampleSizeRun, error) {
	exp := r.Design
	splits, err := r.planSplits()
	if err != nil {
		return nil, err
	}
	var models []ModelConfig
	for _, m := range exp.Models {
		if len(names) == 0 || slices.Contains(names, m.Name) {
			models = append(models, m)
		}
	}
	subsets := SubsetSplits(splits, Groups(r.Cohort), fractions, exp.Seed)
	runs := make([]SampleSizeRun, len(fractions))
	for fi, f := range fractions {
		sub := &Runner{
			Design:        &Design{Seed: exp.Seed, CV: exp.CV, Models: models},
			Cohort:        r.Cohort,
			Jobs:          r.Jobs,
			Logger:        r.Logger,
			newModel:      r.newModel,
			newClassifier: r.newClassifier,
			splits:        subsets[fi],

			scoresOnly: true,
		}
		res, err := sub.Run(ctx)
		if err != nil {
			return nil, fmt.Errorf("sample size %g of each training fold: %w", f, err)
		}
		runs[fi] = SampleSizeRun{Fraction: f, Splits: subsets[fi], Predictions: res.Predictions}
	}
	return runs, nil
}
