package linear

import (
	"fmt"
	"math/rand/v2"
	"sort"

	"github.com/skein-neuro/skein/data"
)

// innerFolds assigns each participant to one of k inner folds and returns
// the fold of each. Participants that share a non-empty Group (a family or
// a site) land in the same fold, so inner validation never sees a relative
// of a fitting participant; a participant without a group is a group of
// one. Groups are shuffled with seed and each goes, largest first, to the
// fold with the fewest participants so far. Fewer groups than folds is an
// error naming key, the experiment key of the fold count.
func innerFolds(ps []*data.Participant, k int, seed int64, key string) ([]int, error) {
	labels := make([]string, len(ps))
	for i, p := range ps {
		labels[i] = p.Group
	}
	groups := data.GroupIndices(labels)
	if len(groups) < k {
		return nil, fmt.Errorf("%s: %d inner folds, but the training fold has only %d participants or groups", key, k, len(groups))
	}
	rng := rand.New(rand.NewPCG(uint64(seed), 0x9e3779b97f4a7c15))
	rng.Shuffle(len(groups), func(i, j int) { groups[i], groups[j] = groups[j], groups[i] })
	sort.SliceStable(groups, func(i, j int) bool { return len(groups[i]) > len(groups[j]) })
	foldOf := make([]int, len(ps))
	size := make([]int, k)
	for _, g := range groups {
		f := 0
		for c := 1; c < k; c++ {
			if size[c] < size[f] {
				f = c
			}
		}
		for _, i := range g {
			foldOf[i] = f
		}
		size[f] += len(g)
	}
	return foldOf, nil
}
