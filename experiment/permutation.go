package experiment

import (
	"errors"
	"fmt"
	"slices"

	"github.com/skein-neuro/skein/internal/enum"
	"github.com/skein-neuro/skein/train"
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
	Blocks train.Blocks `toml:"blocks"`
	// Models names the models to test; empty (the default) tests all.
	Models []string `toml:"models"`
	// Chunk is how many permutations a model that fits score columns
	// independently (ridge, kernel ridge) fits at once as extra columns of
	// one run: more is faster and takes more memory (each chunk refits
	// every fold's decomposition once; measured at N = 275, p = 268, 1000
	// ridge permutations took 4–5× longer in chunks of 250 than in one
	// chunk, bench/permutation_test.go). At least 1; nil takes the default
	// 1000 (set it from Go as new(250)).
	Chunk *int `toml:"chunk"`
}

// SetDefaults fills every unset field with its documented default.
func (p *Permutation) SetDefaults() {
	if p.Blocks == "" {
		p.Blocks = train.BlocksAuto
	}
	if p.Models == nil {
		p.Models = []string{}
	}
	if p.Chunk == nil {
		p.Chunk = new(1000)
	}
}

// MaxPermutations bounds permutation.count and permutation.chunk: every
// permutation keeps its null scores in memory and, for a chunk, a score
// column per permutation, so that a mistyped count (1e12) fails at once
// instead of exhausting memory after training.
const MaxPermutations = 100_000

// Validate reports the first setting that cannot work, naming its key.
func (p Permutation) Validate(models []train.ModelConfig) error {
	if err := enum.Check(p.Blocks); err != nil {
		return fmt.Errorf("permutation.blocks: %w", err)
	}
	switch {
	case p.Count < 0:
		return fmt.Errorf("permutation.count: must not be negative, found %d", p.Count)
	case p.Count > MaxPermutations:
		return fmt.Errorf("permutation.count: at most %d, found %d (a test of %d permutations resolves p down to 1/%d already)",
			MaxPermutations, p.Count, MaxPermutations, MaxPermutations+1)
	case p.Chunk == nil:
		return errors.New("permutation.chunk: must be at least 1, found nothing")
	case *p.Chunk < 1:
		return fmt.Errorf("permutation.chunk: must be at least 1, found %d", *p.Chunk)
	case *p.Chunk > MaxPermutations:
		return fmt.Errorf("permutation.chunk: at most %d, found %d", MaxPermutations, *p.Chunk)
	}
	for _, name := range p.Models {
		if !slices.ContainsFunc(models, func(m train.ModelConfig) bool { return m.Name == name }) {
			return fmt.Errorf("permutation.models: no model is named %q", name)
		}
	}
	return nil
}
