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
//
// The test exchanges the rows of the participants table as wholes, every
// score and every covariate of a participant moving together, relative to
// the connectomes, and repeats the whole cross-validation (target
// preparation and confound regression included) under the same splits.
// Its null hypothesis is that the connectomes are independent of the
// scores and covariates together, with rows exchangeable within the
// blocks that Blocks describes. Under it the null distribution of every
// metric is valid, errors (MAE, RMSE) as well as correlations, with or
// without cv.confounds: a permuted run regresses its permuted scores on
// the covariates that came with them, just as the observed run does.
// (Permuting the scores alone would regress them on covariates they no
// longer depend on, leaving residuals wider than the observed ones, and
// every error metric would look better than chance on null data.) A
// connectome that depends on a covariate (head motion) but carries
// nothing about the scores departs from this null as well.
type Permutation struct {
	// Count is the number of permutations; 0 (the default) runs no test.
	Count int `toml:"count"`
	// Blocks says which rows may be exchanged when the cohort has a
	// grouping column (multi-level block permutation, Winkler et al.
	// 2015, NeuroImage 123:253). Without a grouping column every
	// participant is its own block and rows are exchanged freely.
	//
	//   - "auto" (the default): a group of at most AutoWholeMax members (a
	//     family, a twin pair, an unrelated participant) is exchanged as a
	//     whole with the groups of the same size, and its members are also
	//     shuffled among themselves; a larger group (a scanning site)
	//     stays in place and is shuffled within only.
	//   - "within": rows are shuffled among the members of each group
	//     only. Groups of one never move, so in a family cohort of mostly
	//     unrelated participants the null stays close to the observed run
	//     and the test has little power.
	//   - "whole": whole groups of the same size are exchanged, their order
	//     inside the group kept, and nothing is shuffled within a group.
	//
	// "auto" is valid and keeps power for both kinds of grouping column.
	// Families must move as wholes: siblings' scores are alike, and a
	// permutation that split them would make null data unlike the
	// observed. Shuffling inside a family as well assumes its members are
	// alike to each other (siblings; a family that mixes identical and
	// non-identical twins needs "whole"). Sites stay in place: site
	// differences in scores and connectomes (scanner, recruitment) are a
	// nuisance that exchanging whole sites would count as signal, and few
	// sites share a size. AutoWholeMax = 8 separates the two kinds, being
	// larger than nearly every family and smaller than a site worth
	// modelling (a judgement, common practice, no source).
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

// AutoWholeMax is the largest group that Permutation.Blocks "auto"
// exchanges as a whole (and shuffles within); larger groups are shuffled
// within only.
const AutoWholeMax = 8

// knownBlocks reports whether b is a value of Permutation.Blocks.
func knownBlocks(b string) bool {
	return b == "auto" || b == "within" || b == "whole"
}

// SetDefaults fills every unset field with its documented default.
func (p *Permutation) SetDefaults() {
	if p.Blocks == "" {
		p.Blocks = "auto"
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
	case !knownBlocks(p.Blocks):
		return fmt.Errorf("permutation.blocks: %q is not one of \"auto\", \"within\", \"whole\"", p.Blocks)
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
// the participant whose row of the participants table (scores and
// covariates) participant i receives in permutation k. groups (nil for
// none) and blocks ("auto", "within" or "whole") are as in Permutation;
// any other blocks panics. Each permutation first exchanges the groups
// that are moved as wholes (for "auto" those of at most AutoWholeMax
// members, for "whole" all), among the groups of the same size, then, for
// "auto" and "within", shuffles the rows inside every group. The result
// depends only on its arguments.
func Permutations(n int, groups []string, blocks string, count int, seed uint64) [][]int {
	if !knownBlocks(blocks) {
		panic("train: unknown permutation blocks " + blocks)
	}
	rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	shuffle := func(s []int) { rng.Shuffle(len(s), func(a, b int) { s[a], s[b] = s[b], s[a] }) }
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
	wholeMax := 0 // largest group exchanged as a whole
	switch blocks {
	case "auto":
		wholeMax = AutoWholeMax
	case "whole":
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
		if blocks != "whole" {
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
}

// RunPermutations repeats the whole cross-validation of the named models
// (all when names is empty) once per permutation of the participants'
// rows (scores and covariates together, as Permutation describes), under
// the same splits and inner validation parts as Run, and passes each
// model's predictions for each permutation to null as they are made.
// Each permuted run prepares its targets as Run does, regressing the
// permuted scores on the permuted confounds (cv.confounds). Models that
// fit score columns independently (model.ColumnWise) fit chunk
// permutations at once as extra score columns, reusing each fold's
// decomposition, each column regressed on the confounds of its own
// permutation (FitTargetPrepBlocks); the others are refitted per
// permutation. Either way a permutation's predictions are the same.
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
			pc, confounds, err := permutedCohort(cohort, batch, exp.CV.Confounds)
			if err != nil {
				return err
			}
			cv := exp.CV
			cv.Confounds = confounds
			sub := &Runner{
				Experiment: &Experiment{Seed: exp.Seed, CV: cv, Models: []ModelConfig{m}},
				Cohort:     pc,
				Jobs:       r.Jobs,
				Logger:     r.Logger,
				newModel:   newModel,
				splits:     splits,

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
			for k, preds := range byPerm {
				if err := null(NullRun{Model: m.Name, Permutation: first + k, Predictions: preds}); err != nil {
					return err
				}
			}
		}
	}
	return nil
}

// permutedCohort returns a cohort whose participants keep their matrices
// (shared with c), IDs and groups, and take, in the k-th permutation perm
// of batch, the scores and the named confounds of participant perm[i]:
// targets "TARGET|k" and covariates "CONFOUND|k", block after block. The
// second result names the covariates, the permuted run's cv.confounds.
func permutedCohort(c *data.Cohort, batch [][]int, confounds []string) (*data.Cohort, []string, error) {
	T := len(c.Targets)
	cols := make([]int, len(confounds))
	for j, name := range confounds {
		if cols[j] = slices.Index(c.Covariates, name); cols[j] < 0 {
			return nil, nil, fmt.Errorf("cv.confounds: %q is not a covariate of the cohort (have %v)", name, c.Covariates)
		}
	}
	pc := &data.Cohort{Regions: c.Regions}
	for k := range batch {
		for _, t := range c.Targets {
			pc.Targets = append(pc.Targets, t+"|"+strconv.Itoa(k))
		}
		for _, name := range confounds {
			pc.Covariates = append(pc.Covariates, name+"|"+strconv.Itoa(k))
		}
	}
	for i, p := range c.Participants {
		q := *p
		q.Scores = make([]float64, 0, T*len(batch))
		q.Covariates = make([]float64, 0, len(cols)*len(batch))
		for _, perm := range batch {
			src := c.Participants[perm[i]]
			q.Scores = append(q.Scores, src.Scores...)
			for _, j := range cols {
				q.Covariates = append(q.Covariates, src.Covariates[j])
			}
		}
		pc.Participants = append(pc.Participants, &q)
	}
	return pc, pc.Covariates, nil
}

func splitPermutedTarget(name string) (int, string) {
	cut := strings.LastIndexByte(name, '|')
	k, err := strconv.Atoi(name[cut+1:])
	if cut < 0 || err != nil {
		panic("train: not a permuted target: " + name)
	}
	return k, name[:cut]
}
