package train

import (
	"context"
	"fmt"
	"math"
	"slices"
	"testing"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// repeatLabels returns count groups of size members each, labelled
// prefix1, prefix2, ...
func repeatLabels(prefix string, count, size int) []string {
	var labels []string
	for g := range count {
		for range size {
			labels = append(labels, fmt.Sprintf("%s%d", prefix, g+1))
		}
	}
	return labels
}

// TestPermutationsBlocks checks, for each value of permutation.blocks on a
// family column (unrelated participants as groups of one, pairs, trios)
// and on a site column (groups above AutoWholeMax), which groups a row can
// reach, over many permutations: the rules of multi-level block
// permutation (Winkler et al. 2015, NeuroImage 123:253, from memory) as
// Permutation.Blocks documents them.
func TestPermutationsBlocks(t *testing.T) {
	families := slices.Concat(repeatLabels("single", 6, 1), repeatLabels("pair", 3, 2), repeatLabels("trio", 2, 3))
	sites := slices.Concat(repeatLabels("site", 2, 12), repeatLabels("big", 1, 15))
	mixed := slices.Concat(repeatLabels("site", 1, 9), repeatLabels("pair", 2, 2), repeatLabels("single", 3, 1))
	tests := []struct {
		name   string
		groups []string
		blocks Blocks
		// whole: every group takes all its rows from one group of its
		// size; within: every row stays in its group.
		whole, within bool
		// moved: groups whose rows must come from another group in some
		// permutation; shuffled: groups whose order must change in some
		// permutation; stay: groups that always keep their own rows.
		moved, shuffled, stay []string
	}{
		{"family auto", families, "auto", true, false,
			[]string{"single1", "single6", "pair1", "trio2"}, []string{"pair1", "pair3", "trio1"}, nil},
		{"family within", families, "within", false, true,
			nil, []string{"pair1", "trio2"}, []string{"single1", "single6"}},
		{"family whole", families, "whole", true, false,
			[]string{"single1", "pair2", "trio1"}, nil, nil},
		{"site auto", sites, "auto", false, true,
			nil, []string{"site1", "site2", "big1"}, []string{"site1", "site2", "big1"}},
		{"site whole", sites, "whole", true, false,
			[]string{"site1", "site2"}, nil, []string{"big1"}},
		{"mixed auto", mixed, "auto", true, false,
			[]string{"pair1", "single2"}, []string{"site1", "pair2"}, []string{"site1"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			size := make(map[string]int)
			for _, g := range tt.groups {
				size[g]++
			}
			moved := make(map[string]bool)
			shuffled := make(map[string]bool)
			for _, perm := range Permutations(len(tt.groups), tt.groups, tt.blocks, 200, 7) {
				seen := make([]bool, len(perm))
				source := make(map[string]string) // group -> group its rows came from
				order := make(map[string][]int)   // group -> its rows' sources, in order
				for i, j := range perm {
					if seen[j] {
						t.Fatalf("row %d given twice in %v", j, perm)
					}
					seen[j] = true
					g, from := tt.groups[i], tt.groups[j]
					if s, ok := source[g]; ok && s != from {
						if tt.whole {
							t.Fatalf("group %s took rows from %s and %s", g, s, from)
						}
					}
					source[g] = from
					if tt.within && from != g {
						t.Fatalf("group %s took a row of %s", g, from)
					}
					if size[from] != size[g] {
						t.Fatalf("group %s (size %d) took a row of %s (size %d)", g, size[g], from, size[from])
					}
					if from != g {
						moved[g] = true
					}
					order[g] = append(order[g], j)
				}
				for g, rows := range order {
					if !slices.IsSorted(rows) {
						shuffled[g] = true
					}
				}
			}
			for _, g := range tt.stay {
				if moved[g] {
					t.Errorf("group %s took another group's rows", g)
				}
			}
			for _, g := range tt.moved {
				if !moved[g] {
					t.Errorf("group %s never took another group's rows", g)
				}
			}
			for _, g := range tt.shuffled {
				if !shuffled[g] {
					t.Errorf("the rows of group %s were never shuffled", g)
				}
			}
			if tt.blocks == "whole" && len(shuffled) > 0 {
				t.Errorf("whole: groups %v were shuffled within", shuffled)
			}
		})
	}
}

// TestPermutationsWithoutGroups: without a grouping column every choice
// of blocks exchanges rows freely, with the same permutations.
func TestPermutationsWithoutGroups(t *testing.T) {
	want := Permutations(10, nil, "whole", 50, 3)
	movedTo := make(map[[2]int]bool)
	for _, perm := range want {
		for i, j := range perm {
			movedTo[[2]int{i, j}] = true
		}
	}
	// 50 uniform permutations of 10 reach every (i, j) pair except with
	// probability below 100·(9/10)^50 = 0.5%; the seed is fixed.
	if len(movedTo) != 100 {
		t.Errorf("%d of 100 (row, source) pairs reached", len(movedTo))
	}
	for _, blocks := range []Blocks{BlocksAuto, BlocksWithin} {
		if got := Permutations(10, nil, blocks, 50, 3); !slices.EqualFunc(got, want, slices.Equal) {
			t.Errorf("%s: permutations differ from whole's", blocks)
		}
	}
}

// TestRunPermutationsMovesWholeRows: a permuted run, alone or in a chunk
// of column-wise fits, gives the predictions of an ordinary run on the
// cohort whose participants took the scores and the covariates of
// perm[i], confound regression included (the definition in Permutation's
// doc; the splits do not depend on the scores without stratification).
func TestRunPermutationsMovesWholeRows(t *testing.T) {
	cohort := toyCohort(36, 6, 5, true)
	cohort.Covariates = append(cohort.Covariates, "site")
	for i, p := range cohort.Participants {
		p.Scores[0] += 0.2 * p.Covariates[0]
		p.Covariates = append(p.Covariates, float64(i%3))
	}
	cohort.Participants[4].Covariates[0] = math.NaN() // filled with its block's training mean
	exp := toyDesign(ridgeAndMean()...)
	exp.CV.Confounds = []string{"site", "age"}
	perms := Permutations(len(cohort.Participants), Groups(cohort), "auto", 5, 9)
	var events []Event
	r := &Runner{Design: exp, Cohort: cohort, Jobs: 1, OnEvent: func(e Event) { events = append(events, e) }}

	for _, chunk := range []int{1, 3, 5} {
		got := make(map[[2]any][]model.Prediction) // (model, permutation) -> predictions
		events = nil
		err := r.RunPermutations(context.Background(), perms, nil, chunk, func(run NullRun) error {
			got[[2]any{run.Model, run.Permutation}] = run.Predictions
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		// One PermutationDone per model and permutation, counting up.
		if want := len(exp.Models) * len(perms); len(events) != want {
			t.Fatalf("chunk %d: %d events, want %d", chunk, len(events), want)
		}
		for k, e := range events {
			if e.Kind != PermutationDone || e.Finished != k+1 || e.Total != len(events) {
				t.Fatalf("chunk %d: event %d is %+v", chunk, k, e)
			}
		}
		for k, perm := range perms {
			moved := &data.Cohort{Targets: cohort.Targets, Covariates: cohort.Covariates, Regions: cohort.Regions}
			for i, p := range cohort.Participants {
				q := *p
				q.Scores, q.Covariates = cohort.Participants[perm[i]].Scores, cohort.Participants[perm[i]].Covariates
				moved.Participants = append(moved.Participants, &q)
			}
			res, err := (&Runner{Design: exp, Cohort: moved, Jobs: 1}).Run(context.Background())
			if err != nil {
				t.Fatal(err)
			}
			want := make(map[string][]model.Prediction)
			for _, p := range res.Predictions {
				want[p.Model] = append(want[p.Model], p)
			}
			for name, preds := range want {
				run := got[[2]any{name, k}]
				if len(run) != len(preds) {
					t.Fatalf("chunk %d, %s, permutation %d: %d predictions, want %d", chunk, name, k, len(run), len(preds))
				}
				for j, p := range preds {
					q := run[j]
					if q.ParticipantID != p.ParticipantID || q.Target != p.Target || q.Fold != p.Fold || q.Repeat != p.Repeat ||
						math.Abs(q.Observed-p.Observed) > 1e-9 || math.Abs(q.Predicted-p.Predicted) > 1e-9 {
						t.Fatalf("chunk %d, %s, permutation %d: prediction %d is %+v, want %+v", chunk, name, k, j, q, p)
					}
				}
			}
		}
	}
}
