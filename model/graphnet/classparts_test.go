package graphnet

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/skein-neuro/skein/data"
)

// TestEnsemblePartsByClass checks the class proportions of a
// Classifier's ensemble parts: every participant in exactly one part, no
// part empty, groups whole, and each class spread over the parts as
// evenly as whole groups allow (counts differing by at most the largest
// group; by one without groups, common practice, no source).
func TestEnsemblePartsByClass(t *testing.T) {
	tests := []struct {
		name   string
		counts []int // participants per class
		family int   // group size; 1 for none
		K      int
	}{
		{"two classes, 5 parts", []int{13, 5}, 1, 5},
		{"three classes, 3 parts", []int{20, 7, 3}, 1, 3},
		{"a class rarer than the parts", []int{12, 2}, 1, 4},
		{"families of two, 4 parts", []int{24, 8}, 2, 4},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var ps []*data.Participant
			var labels []int
			for c, n := range tt.counts {
				for i := range n {
					q := &data.Participant{ID: fmt.Sprintf("c%d-%d", c, i)}
					if tt.family > 1 {
						q.Group = fmt.Sprintf("family-%d-%d", c, i/tt.family)
					}
					ps = append(ps, q)
					labels = append(labels, c)
				}
			}
			// Shuffle the participants, as a joined set comes in any order.
			rng := rand.New(rand.NewPCG(1, 2))
			perm := rng.Perm(len(ps))
			shuffled, shuffledLabels := make([]*data.Participant, len(ps)), make([]int, len(ps))
			for i, j := range perm {
				shuffled[i], shuffledLabels[i] = ps[j], labels[j]
			}
			for seed := range uint64(4) {
				parts, err := ensemblePartsByClass(shuffled, shuffledLabels, tt.K, rand.New(rand.NewPCG(seed, ensembleStream)))
				if err != nil {
					t.Fatal(err)
				}
				var all []int
				count := make([][]int, tt.K)
				partOf := make(map[string]int)
				for k, part := range parts {
					if len(part) == 0 {
						t.Fatalf("seed %d: part %d is empty", seed, k+1)
					}
					if !slices.IsSorted(part) {
						t.Fatalf("seed %d: part %d not sorted", seed, k+1)
					}
					all = append(all, part...)
					count[k] = make([]int, len(tt.counts))
					for _, i := range part {
						count[k][shuffledLabels[i]]++
						if g := shuffled[i].Group; g != "" {
							if was, ok := partOf[g]; ok && was != k {
								t.Fatalf("seed %d: group %s in parts %d and %d", seed, g, was+1, k+1)
							}
							partOf[g] = k
						}
					}
				}
				slices.Sort(all)
				if len(all) != len(ps) || slices.Compact(all) == nil || len(slices.Compact(slices.Clone(all))) != len(ps) {
					t.Fatalf("seed %d: parts hold %d participants, want each of %d once", seed, len(all), len(ps))
				}
				t.Logf("seed %d: class counts per part %v", seed, count)
				for c := range tt.counts {
					lo, hi := count[0][c], count[0][c]
					for k := range parts {
						lo, hi = min(lo, count[k][c]), max(hi, count[k][c])
					}
					if hi-lo > tt.family {
						t.Errorf("seed %d: class %d: %d to %d per part, want within %d", seed, c, lo, hi, tt.family)
					}
				}
			}
		})
	}
}
