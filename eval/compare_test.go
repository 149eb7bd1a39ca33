package eval

import (
	"fmt"
	"maps"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

func TestChooseReference(t *testing.T) {
	nan := math.NaN()
	targets := []string{"recall", "fluency"}
	tests := []struct {
		name      string
		baselines []string
		named     string
		loss      map[string][]float64
		want      map[string]string
		rule      string
	}{
		{"named in the experiment", []string{"mean", "ridge"}, "mean", map[string][]float64{"ridge": {0.5, 0.5}, "mean": {1, 1}},
			map[string]string{"recall": "mean", "fluency": "mean"}, "named in the experiment"},
		{"lowest inner-validation loss per target", []string{"mean", "ridge", "cpm"}, "",
			map[string][]float64{"mean": {1.02, 1.01}, "ridge": {0.61, 1.05}, "cpm": {0.7, nan}},
			map[string]string{"recall": "ridge", "fluency": "mean"}, "lowest inner-validation error"},
		{"no inner validation", []string{"ridge", "mean"}, "", nil,
			map[string]string{"recall": "ridge", "fluency": "ridge"}, "first baseline of the experiment"},
		{"one baseline", []string{"cpm"}, "", nil,
			map[string]string{"recall": "cpm", "fluency": "cpm"}, "the only baseline"},
		{"no baseline", nil, "", nil, map[string]string{}, ""},
	}
	for _, tt := range tests {
		got, rule := ChooseReference(targets, tt.baselines, tt.named, tt.loss)
		if !maps.Equal(got, tt.want) {
			t.Errorf("%s: references %v, want %v", tt.name, got, tt.want)
		}
		if !strings.Contains(rule, tt.rule) {
			t.Errorf("%s: rule %q lacks %q", tt.name, rule, tt.rule)
		}
	}
}

// foldRows returns the rows of one model on one target under repeated
// k-fold splits of the given test sets, with invented scores.
func foldRows(model string, tests [][][]int, rng *rand.Rand, noise float64) []Prediction {
	var rows []Prediction
	for r, folds := range tests {
		for f, members := range folds {
			for _, i := range members {
				y := float64(i%7) + rng.NormFloat64()
				rows = append(rows, Prediction{ParticipantID: fmt.Sprintf("sub-%02d", i), Model: model, Target: "t",
					Repeat: r, Fold: f, Observed: y, Predicted: y + noise*rng.NormFloat64()})
			}
		}
	}
	return rows
}

func TestDuplicateFolds(t *testing.T) {
	first := [][]int{{0, 1, 2}, {3, 4, 5}, {6, 7}}
	shuffled := [][]int{{3, 4, 5}, {6, 7}, {0, 1, 2}} // the same partition, folds renumbered
	other := [][]int{{0, 3, 6}, {1, 4, 7}, {2, 5}}
	rng := rand.New(rand.NewPCG(1, 2))
	tests := []struct {
		name  string
		folds [][][]int
		want  int
	}{
		{"distinct repeats", [][][]int{first, other}, 0},
		{"a repeat of the same partition", [][][]int{first, shuffled, other}, 3},
		{"one fold repeated", [][][]int{first, {{0, 1, 2}, {3, 4, 6}, {5, 7}}}, 1},
	}
	for _, tt := range tests {
		dup := DuplicateFolds(foldRows("m", tt.folds, rng, 1))
		if len(dup) != tt.want {
			t.Errorf("%s: %d duplicate folds %v, want %d", tt.name, len(dup), dup, tt.want)
		}
		for k := range dup {
			if k[0] == 0 {
				t.Errorf("%s: fold %v of the first repeat marked as a duplicate", tt.name, k)
			}
		}
	}
}

// With as many groups as folds every repeat deals the same folds: the
// corrected t-test must count each fold once (J = 4, not 12) and equal the
// test on the first repeat alone.
func TestCompareCountsDistinctFolds(t *testing.T) {
	folds := [][]int{{0, 1, 2, 3, 4}, {5, 6, 7, 8, 9}, {10, 11, 12, 13, 14}, {15, 16, 17, 18, 19}}
	perm := [][]int{folds[2], folds[0], folds[3], folds[1]}
	rng := rand.New(rand.NewPCG(3, 4))
	var rows []Prediction
	rows = append(rows, foldRows("net", [][][]int{folds, perm, folds}, rng, 0.5)...)
	rows = append(rows, foldRows("ridge", [][][]int{folds, perm, folds}, rng, 1)...)
	sum := Summarize(rows, 0, true)
	comps, err := Compare(sum, rows, CompareOptions{
		Baselines: map[string]bool{"ridge": true}, Reference: map[string]string{"t": "ridge"}, NTrain: 15, NTest: 5, Resamples: 10,
	})
	if err != nil {
		t.Fatal(err)
	}
	net := comps[0]
	if net.Model != "net" || net.Reference != "ridge" {
		t.Fatalf("first comparison is %s against %q", net.Model, net.Reference)
	}
	if net.DiffR.J != 4 || net.RepeatedFolds != 8 {
		t.Errorf("t-test over J = %d folds with %d repeated; want 4 and 8", net.DiffR.J, net.RepeatedFolds)
	}
	diff, err := FoldDifferences(sum.Group("net", "t"), sum.Group("ridge", "t"), MetricPearson)
	if err != nil {
		t.Fatal(err)
	}
	want := CorrectedTTest(diff[:4], 15, 5)
	if net.DiffR != want {
		t.Errorf("t-test %+v, want the first repeat's %+v", net.DiffR, want)
	}
	if !comps[1].IsReference || comps[1].Reference != "" {
		t.Errorf("ridge: IsReference %v, Reference %q; want the reference itself", comps[1].IsReference, comps[1].Reference)
	}
}
