package train

import (
	"context"
	"fmt"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// Permutation configures the permutation test of every model's
// cross-validated performance: the [permutation] table of an experiment
// file.
type Permutation struct {
	// Count is the number of permutations; 0 (the default) runs no test.
	Count int `toml:"count"`
	// Blocks says how scores are permuted when the cohort has a grouping
	// column: "within" (the default) shuffles scores among the members of
	// each group, for groups such as scanning sites; "whole" exchanges the
	// scores of whole groups of the same size, keeping their order inside
	// the group, for groups such as families (Winkler et al. 2015,
	// "Multi-level block permutation", NeuroImage). Without a grouping
	// column every participant is its own block.
	Blocks string `toml:"blocks"`
	// Models names the models to test; empty (the default) tests all.
	Models []string `toml:"models"`
	// Chunk is how many permutations a model that fits score columns
	// independently (ridge, kernel ridge) fits at once as extra columns of
	// one run: more is faster and takes more memory (each chunk refits
	// every fold's decomposition once; measured at N = 275, p = 268, 1000
	// ridge permutations took 4–5× longer in chunks of 250 than in one
	// chunk, bench/permutation_test.go). Default 1000.
	Chunk int `toml:"chunk"`
}

// SetDefaults fills every unset field with its documented default.
func (p *Permutation) SetDefaults() {
	if p.Blocks == "" {
		p.Blocks = "within"
	}
	if p.Models == nil {
		p.Models = []string{}
	}
	if p.Chunk == 0 {
		p.Chunk = 1000
	}
}

// Validate reports the first setting that cannot work, naming its key.
func (p Permutation) Validate(models []ModelConfig) error {
	switch {
	case p.Count < 0:
		return fmt.Errorf("permutation.count: must not be negative, found %d", p.Count)
	case p.Blocks != "within" && p.Blocks != "whole":
		return fmt.Errorf("permutation.blocks: %q is not one of \"within\", \"whole\"", p.Blocks)
	case p.Chunk < 1:
		return fmt.Errorf("permutation.chunk: must be at least 1, found %d", p.Chunk)
	}
	for _, name := range p.Models {
		if !slices.ContainsFunc(models, func(m ModelConfig) bool { return m.Name == name }) {
			return fmt.Errorf("permutation.models: no model is named %q", name)
		}
	}
	return nil
}

// Permutations returns count permutations of n participants: perm[k][i] is
// the participant whose scores participant i receives in permutation k.
// groups (nil for none) and blocks are as in Permutation. The result
// depends only on its arguments.
func Permutations(n int, groups []string, blocks string, count int, seed uint64) [][]int {
	rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	var members [][]int
	if groups == nil {
		members = make([][]int, n)
		for i := range members {
			members[i] = []int{i}
		}
		blocks = "whole"
	} else {
		members = Folds{Groups: groups}.units(n)
	}
	perms := make([][]int, count)
	for k := range perms {
		perm := make([]int, n)
		switch blocks {
		case "within":
			for _, m := range members {
				shuffled := slices.Clone(m)
				rng.Shuffle(len(shuffled), func(a, b int) { shuffled[a], shuffled[b] = shuffled[b], shuffled[a] })
				for j, i := range m {
					perm[i] = shuffled[j]
				}
			}
		case "whole":
			bySize := make(map[int][]int) // block size -> blocks of that size
			var sizes []int
			for b, m := range members {
				if _, ok := bySize[len(m)]; !ok {
					sizes = append(sizes, len(m))
				}
				bySize[len(m)] = append(bySize[len(m)], b)
			}
			for _, size := range sizes {
				same := bySize[size]
				shuffled := slices.Clone(same)
				rng.Shuffle(len(shuffled), func(a, b int) { shuffled[a], shuffled[b] = shuffled[b], shuffled[a] })
				for j, b := range same {
					for r, i := range members[b] {
						perm[i] = members[shuffled[j]][r]
					}
				}
			}
		default:
			panic("train: unknown permutation blocks " + blocks)
		}
		perms[k] = perm
	}
	return perms
}

// NullRun is one model's cross-validated predictions under one permutation
// of the scores.
type NullRun struct {
	Model       string
	Permutation int // index into the permutations
	Predictions []model.Prediction
}

// RunPermutations repeats the whole cross-validation of the named models
// (all when names is empty) once per permutation of the scores, under the
// same splits and inner validation parts as Run, and passes each model's
// predictions for each permutation to null as they are made. Models that
// fit score columns independently (model.ColumnWise) fit chunk
// permutations at once as extra score columns, reusing each fold's
// decomposition; the others are refitted per permutation.
func (r *Runner) RunPermutations(ctx context.Context, perms [][]int, names []string, chunk int, null func(NullRun) error) error {
	exp, cohort := r.Experiment, r.Cohort
	splits, err := exp.CV.folds(exp.Seed, cohort).Splits(len(cohort.Participants))
	if err != nil {
		return err
	}
	newModel := r.newModel
	if newModel == nil {
		newModel = buildModel
	}
	T := len(cohort.Targets)
	for _, m := range exp.Models {
		if len(names) > 0 && !slices.Contains(names, m.Name) {
			continue
		}
		probe, err := newModel(m, cohort.P(), T, 0)
		if err != nil {
			return fmt.Errorf("model %q: %w", m.Name, err)
		}
		_, columnWise := probe.(model.ColumnWise)
		step := 1
		if columnWise {
			step = max(1, chunk)
		}
		for first := 0; first < len(perms); first += step {
			batch := perms[first:min(first+step, len(perms))]
			sub := &Runner{
				Experiment: &Experiment{Seed: exp.Seed, CV: exp.CV, Models: []ModelConfig{m}},
				Cohort:     permutedCohort(cohort, batch),
				Jobs:       r.Jobs,
				Logger:     r.Logger,
				newModel:   newModel,
				splits:     splits,

				skipImportance: true,
			}
			res, err := sub.Run(ctx)
			if err != nil {
				return fmt.Errorf("permutations %d–%d: %w", first+1, first+len(batch), err)
			}
			byPerm := make([][]model.Prediction, len(batch))
			for _, p := range res.Predictions {
				k, target := splitPermutedTarget(p.Target)
				p.Target = target
				byPerm[k] = append(byPerm[k], p)
			}
			for k, preds := range byPerm {
				if err := null(NullRun{Model: m.Name, Permutation: first + k, Predictions: preds}); err != nil {
					return err
				}
			}
		}
	}
	return nil
}

// permutedCohort returns a cohort whose targets are the original targets
// under each permutation of batch, named "TARGET|k" for the k-th of the
// batch. Participants share their matrices with c.
func permutedCohort(c *data.Cohort, batch [][]int) *data.Cohort {
	T := len(c.Targets)
	pc := &data.Cohort{Covariates: c.Covariates, Regions: c.Regions}
	for k := range batch {
		for _, t := range c.Targets {
			pc.Targets = append(pc.Targets, t+"|"+strconv.Itoa(k))
		}
	}
	for i, p := range c.Participants {
		q := *p
		q.Scores = make([]float64, 0, T*len(batch))
		for _, perm := range batch {
			q.Scores = append(q.Scores, c.Participants[perm[i]].Scores...)
		}
		pc.Participants = append(pc.Participants, &q)
	}
	return pc
}

func splitPermutedTarget(name string) (int, string) {
	cut := strings.LastIndexByte(name, '|')
	k, err := strconv.Atoi(name[cut+1:])
	if cut < 0 || err != nil {
		panic("train: not a permuted target: " + name)
	}
	return k, name[:cut]
}
