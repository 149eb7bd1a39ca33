package train

import (
	"context"
	"fmt"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/internal/enum"
	"github.com/skein-neuro/skein/model"
)

// AutoWholeMax is the largest group that BlocksAuto exchanges as a whole
// (and shuffles within); larger groups are shuffled within only.
const AutoWholeMax = 8

// Blocks says which rows of the participants table a permutation may
// exchange when the cohort has a grouping column: the key
// permutation.blocks of an experiment file. One of BlocksAuto,
// BlocksWithin or BlocksWhole; "" is unset (SetDefaults of the experiment
// makes it BlocksAuto).
type Blocks string

// The permutation blocks rules (see Permutations).
const (
	// BlocksAuto exchanges groups of at most AutoWholeMax members as
	// wholes among the groups of the same size and shuffles within every
	// group.
	BlocksAuto Blocks = "auto"
	// BlocksWithin shuffles rows within each group only.
	BlocksWithin Blocks = "within"
	// BlocksWhole exchanges whole groups of the same size, keeping the
	// order inside each.
	BlocksWhole Blocks = "whole"
)

// UnmarshalText sets b to the word text: "auto", "within", "whole" or ""
// (unset). Another word is an error listing these.
func (b *Blocks) UnmarshalText(text []byte) error {
	return enum.Parse(b, text, BlocksAuto, BlocksWithin, BlocksWhole)
}

// MarshalText returns the word of b.
func (b Blocks) MarshalText() ([]byte, error) { return []byte(b), nil }

// String returns the word of b.
func (b Blocks) String() string { return string(b) }

// Permutations returns count permutations of n participants: perm[k][i] is
// the participant whose row of the participants table (scores and
// covariates) participant i receives in permutation k. groups (nil for
// none) and blocks are as in the experiment's Permutation; a blocks other
// than BlocksAuto, BlocksWithin or BlocksWhole panics. Each permutation
// first exchanges the groups that are moved as wholes (for BlocksAuto those
// of at most AutoWholeMax members, for BlocksWhole all), among the groups
// of the same size, then, for BlocksAuto and BlocksWithin, shuffles the
// rows inside every group. The result depends only on its arguments.
func Permutations(n int, groups []string, blocks Blocks, count int, seed uint64) [][]int {
	if blocks != BlocksAuto && blocks != BlocksWithin && blocks != BlocksWhole {
		panic("train: unknown permutation blocks " + string(blocks))
	}
	rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	shuffle := func(s []int) { rng.Shuffle(len(s), func(a, b int) { s[a], s[b] = s[b], s[a] }) }
	var members [][]int
	if groups == nil {
		members = make([][]int, n)
		for i := range members {
			members[i] = []int{i}
		}
		blocks = BlocksWhole
	} else {
		members = Folds{Groups: groups}.units(n)
	}
	wholeMax := 0 // largest group exchanged as a whole
	switch blocks {
	case BlocksAuto:
		wholeMax = AutoWholeMax
	case BlocksWhole:
		wholeMax = n
	}
	bySize := make(map[int][]int) // block size -> blocks of that size exchanged as wholes
	var sizes []int
	for b, m := range members {
		if len(m) > wholeMax {
			continue
		}
		if _, ok := bySize[len(m)]; !ok {
			sizes = append(sizes, len(m))
		}
		bySize[len(m)] = append(bySize[len(m)], b)
	}
	perms := make([][]int, count)
	for k := range perms {
		perm := make([]int, n)
		for i := range perm {
			perm[i] = i
		}
		for _, size := range sizes {
			same := bySize[size]
			shuffled := slices.Clone(same)
			shuffle(shuffled)
			for j, b := range same {
				for r, i := range members[b] {
					perm[i] = members[shuffled[j]][r]
				}
			}
		}
		if blocks != BlocksWhole {
			for _, m := range members {
				rows := make([]int, len(m))
				for j, i := range m {
					rows[j] = perm[i]
				}
				shuffle(rows)
				for j, i := range m {
					perm[i] = rows[j]
				}
			}
		}
		perms[k] = perm
	}
	return perms
}

// NullRun is one model's cross-validated predictions under one permutation
// of the participants' rows.
type NullRun struct {
	Model       string
	Permutation int // index into the permutations
	Predictions []model.Prediction
	// ClassPredictions are the model's class probabilities for the
	// permuted labels, when it learns the cohort's labels.
	ClassPredictions []model.ClassPrediction
}

// RunPermutations repeats the whole cross-validation of the named models
// (all when names is empty) once per permutation of the participants'
// rows (scores, labels and covariates together, as Permutation
// describes), under
// the same splits and inner validation parts as Run, and passes each
// model's predictions for each permutation to null as they are made.
// Each permuted run prepares its targets as Run does, regressing the
// permuted scores on the permuted confounds (cv.confounds). Models whose
// kind fits score columns independently (model.Kind.ColumnWise) fit chunk
// permutations at once as extra score columns, reusing each fold's
// decomposition, each column regressed on the confounds of its own
// permutation (FitTargetPrepBlocks); the others are refitted per
// permutation. Either way a permutation's predictions are the same.
// Classifiers are refitted on each permutation's labels, which are
// permuted with the scores, in the same exchangeability blocks.
// r.OnEvent, when set, receives a PermutationDone event after each
// permutation of each model has been passed to null.
func (r *Runner) RunPermutations(ctx context.Context, perms [][]int, names []string, chunk int, null func(NullRun) error) error {
	exp, cohort := withSiteConfound(r.Design, r.Cohort)
	splits, err := exp.CV.folds(exp.Seed, cohort).Splits(len(cohort.Participants))
	if err != nil {
		return err
	}
	selected := func(m ModelConfig) bool { return len(names) == 0 || slices.Contains(names, m.Name) }
	start, done, total := time.Now(), 0, 0
	for _, m := range exp.Models {
		if selected(m) {
			total += len(perms)
		}
	}
	for _, m := range exp.Models {
		if !selected(m) {
			continue
		}
		k, err := m.Spec()
		if err != nil {
			return fmt.Errorf("model %q: %w", m.Name, err)
		}
		step := 1
		if k.ColumnWise {
			step = max(1, chunk)
		}
		for first := 0; first < len(perms); first += step {
			batch := perms[first:min(first+step, len(perms))]
			var preserved []string
			if exp.CV.Harmonize != nil {
				preserved = exp.CV.Harmonize.Preserve
			}
			pc, confounds, err := permutedCohort(cohort, batch, exp.CV.Confounds, preserved)
			if err != nil {
				return err
			}
			cv := exp.CV
			cv.Confounds = confounds
			sub := &Runner{
				Design:        &Design{Seed: exp.Seed, CV: cv, Models: []ModelConfig{m}},
				Cohort:        pc,
				Jobs:          r.Jobs,
				Logger:        r.Logger,
				newModel:      r.newModel,
				newClassifier: r.newClassifier,
				splits:        splits,

				scoresOnly: true,
				prepBlocks: len(batch),
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
			classesByPerm := make([][]model.ClassPrediction, len(batch))
			for _, p := range res.ClassPredictions {
				k, label := splitPermutedTarget(p.Label)
				p.Label = label
				classesByPerm[k] = append(classesByPerm[k], p)
			}
			for k, preds := range byPerm {
				run := NullRun{Model: m.Name, Permutation: first + k, Predictions: preds, ClassPredictions: classesByPerm[k]}
				if err := null(run); err != nil {
					return err
				}
				done++
				if r.OnEvent != nil {
					r.OnEvent(Event{Kind: PermutationDone, Model: m.Name, Finished: done, Total: total, Elapsed: time.Since(start)})
				}
			}
		}
	}
	return nil
}

// permutedCohort returns a cohort whose participants keep their matrices
// (shared with c), IDs and groups, and take, in the k-th permutation perm
// of batch, the scores and the named confounds of participant perm[i]:
// targets "TARGET|k", labels "LABEL|k" and covariates "CONFOUND|k", block
// after block. The
// second result names the covariates, the permuted run's cv.confounds.
// The covariates preserved names (those harmonisation preserves, which
// describe the matrices) follow, unpermuted, under their own names.
func permutedCohort(c *data.Cohort, batch [][]int, confounds, preserved []string) (*data.Cohort, []string, error) {
	T := len(c.Targets)
	cols := make([]int, len(confounds))
	for j, name := range confounds {
		if cols[j] = slices.Index(c.Covariates, name); cols[j] < 0 {
			return nil, nil, fmt.Errorf("cv.confounds: %q is not a covariate of the cohort (covariates: %s)", name, wordList(c.Covariates))
		}
	}
	pc := &data.Cohort{Regions: c.Regions, SiteColumn: c.SiteColumn, Series: c.Series}
	for k := range batch {
		for _, t := range c.Targets {
			pc.Targets = append(pc.Targets, t+"|"+strconv.Itoa(k))
		}
		for _, name := range confounds {
			pc.Covariates = append(pc.Covariates, name+"|"+strconv.Itoa(k))
		}
		for l, name := range c.Labels {
			pc.Labels = append(pc.Labels, name+"|"+strconv.Itoa(k))
			pc.Classes = append(pc.Classes, c.Classes[l])
		}
	}
	permuted := slices.Clone(pc.Covariates)
	keep := make([]int, len(preserved))
	for j, name := range preserved {
		if keep[j] = slices.Index(c.Covariates, name); keep[j] < 0 {
			return nil, nil, fmt.Errorf("cv.harmonize.preserve: %q is not a covariate of the cohort (have %v)", name, c.Covariates)
		}
	}
	pc.Covariates = append(pc.Covariates, preserved...)
	for i, p := range c.Participants {
		q := *p
		q.Scores = make([]float64, 0, T*len(batch))
		q.Covariates = make([]float64, 0, len(cols)*len(batch)+len(keep))
		q.Labels = make([]int, 0, len(c.Labels)*len(batch))
		for _, perm := range batch {
			src := c.Participants[perm[i]]
			q.Scores = append(q.Scores, src.Scores...)
			q.Labels = append(q.Labels, src.Labels...)
			for _, j := range cols {
				q.Covariates = append(q.Covariates, src.Covariates[j])
			}
		}
		for _, j := range keep {
			q.Covariates = append(q.Covariates, p.Covariates[j])
		}
		pc.Participants = append(pc.Participants, &q)
	}
	return pc, permuted, nil
}

func splitPermutedTarget(name string) (int, string) {
	cut := strings.LastIndexByte(name, '|')
	k, err := strconv.Atoi(name[cut+1:])
	if cut < 0 || err != nil {
		panic("train: not a permuted target: " + name)
	}
	return k, name[:cut]
}
