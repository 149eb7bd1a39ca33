package train

import (
	"encoding/json"
	"fmt"
	"github.com/skein-neuro/skein/model/linear"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"testing"

	"github.com/skein-neuro/skein/data"
)

// stratifiedFixture is testdata/folds/stratified.json, written by
// make_folds.py with scikit-learn 1.2.1.
type stratifiedFixture struct {
	K        int              `json:"k"`
	Plain    []int            `json:"plain"`
	PlainSK  map[string][]int `json:"plain_sklearn_counts"`
	Grouped  []int            `json:"grouped"`
	Families []string         `json:"families"`
	GroupSK  map[string][]int `json:"grouped_sklearn_counts"`
}

func readStratified(t *testing.T) stratifiedFixture {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("testdata", "folds", "stratified.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fx stratifiedFixture
	if err := json.Unmarshal(raw, &fx); err != nil {
		t.Fatal(err)
	}
	return fx
}

// classCounts returns, per class (missing as "-1"), the number of test
// participants of each fold of the first repeat.
func classCounts(classes []int, splits []Split, k int) map[string][]int {
	out := map[string][]int{}
	for _, c := range classes {
		out[strconv.Itoa(c)] = make([]int, k)
	}
	for _, s := range splits {
		if s.Repeat != 0 {
			continue
		}
		for _, i := range s.Test {
			out[strconv.Itoa(classes[i])][s.Fold]++
		}
	}
	return out
}

// TestStratifiedByClassMatchesScikitLearn: without groups, every fold
// holds ⌊n_c/K⌋ or ⌈n_c/K⌉ participants of each class c, so the sorted
// per-fold counts of each class equal those of scikit-learn's
// StratifiedKFold (testdata/folds/make_folds.py), missing labels a class
// of their own; membership differs and is not compared. Every repeat of
// every seed is checked against the floor/ceiling property.
func TestStratifiedByClassMatchesScikitLearn(t *testing.T) {
	fx := readStratified(t)
	for seed := uint64(0); seed < 5; seed++ {
		f := Folds{K: fx.K, Repeats: 3, Seed: seed, Classes: fx.Plain}
		splits, err := f.Splits(len(fx.Plain))
		if err != nil {
			t.Fatal(err)
		}
		for r := range 3 {
			var rep []Split
			for _, s := range splits {
				if s.Repeat == r {
					s.Repeat = 0
					rep = append(rep, s)
				}
			}
			got := classCounts(fx.Plain, rep, fx.K)
			for c, want := range fx.PlainSK {
				g := slices.Sorted(slices.Values(got[c]))
				w := slices.Sorted(slices.Values(want))
				if !reflect.DeepEqual(g, w) {
					t.Errorf("seed %d repeat %d class %s: fold counts %v, scikit-learn StratifiedKFold %v", seed, r, c, got[c], want)
				}
			}
		}
	}
}

// TestStratifiedGroupsByClass: with families, groups stay whole, every
// class is in every test fold (as in scikit-learn's StratifiedGroupKFold
// on the same cohort, make_folds.py), and the largest departure of a
// fold's class count from n_c/K is no larger than scikit-learn's.
func TestStratifiedGroupsByClass(t *testing.T) {
	fx := readStratified(t)
	worst := func(counts map[string][]int) float64 {
		var w float64
		for _, fold := range counts {
			var n int
			for _, x := range fold {
				n += x
			}
			for _, x := range fold {
				w = max(w, math.Abs(float64(x)-float64(n)/float64(len(fold))))
			}
		}
		return w
	}
	skWorst := worst(fx.GroupSK)
	for c, fold := range fx.GroupSK {
		if slices.Contains(fold, 0) {
			t.Fatalf("fixture: scikit-learn left class %s out of a fold: %v", c, fold)
		}
	}
	for seed := uint64(0); seed < 5; seed++ {
		f := Folds{K: fx.K, Repeats: 1, Seed: seed, Classes: fx.Grouped, Groups: fx.Families}
		splits, err := f.Splits(len(fx.Grouped))
		if err != nil {
			t.Fatal(err)
		}
		for _, s := range splits {
			test := map[string]bool{}
			for _, i := range s.Test {
				test[fx.Families[i]] = true
			}
			for _, i := range s.Train {
				if test[fx.Families[i]] {
					t.Fatalf("seed %d fold %d: family %s on both sides", seed, s.Fold, fx.Families[i])
				}
			}
		}
		got := classCounts(fx.Grouped, splits, fx.K)
		for c, fold := range got {
			if slices.Contains(fold, 0) {
				t.Errorf("seed %d: class %s missing from a fold: %v", seed, c, fold)
			}
		}
		if w := worst(got); w > skWorst {
			t.Errorf("seed %d: counts %v depart from n_c/K by up to %.2f; scikit-learn's %v by %.2f", seed, got, w, fx.GroupSK, skWorst)
		}
		if seed == 0 {
			t.Logf("skein %v (worst %.2f); scikit-learn %v (worst %.2f)", got, worst(got), fx.GroupSK, skWorst)
		}
	}
}

// TestFoldsByLabel: the experiment's folds stratify by the first label
// when cv.stratify is unset, by a named label, or by a target's quantiles
// as before; score-only cohorts keep their splits.
func TestFoldsByLabel(t *testing.T) {
	c := &data.Cohort{Targets: []string{"score"}}
	for i := range 20 {
		c.Participants = append(c.Participants, &data.Participant{ID: fmt.Sprint(i), Scores: []float64{float64(i)}})
	}
	scoreOnly := CV{Folds: new(4), Repeats: new(2)}
	before, err := scoreOnly.folds(7, c).Splits(20)
	if err != nil {
		t.Fatal(err)
	}
	labelled := *c
	labelled.Labels = []string{"dx", "stage"}
	labelled.Classes = [][]string{{"a", "b"}, {"x", "y", "z"}}
	labelled.Participants = nil
	for i, p := range c.Participants {
		q := *p
		q.Labels = []int{i % 2, i % 3}
		labelled.Participants = append(labelled.Participants, &q)
	}
	for _, tc := range []struct {
		name     string
		stratify string
		want     []int // classes read; nil for none
	}{
		{"first label", "", []int{0, 1, 0, 1}},
		{"named label", "stage", []int{0, 1, 2, 0}},
		{"target", "score", nil},
	} {
		cv := scoreOnly
		cv.Stratify = tc.stratify
		f := cv.folds(7, &labelled)
		if tc.want == nil {
			if f.Classes != nil || f.Strata == nil {
				t.Errorf("%s: classes %v strata %v", tc.name, f.Classes, f.Strata)
			}
			continue
		}
		if !reflect.DeepEqual(f.Classes[:4], tc.want) {
			t.Errorf("%s: classes %v, want %v", tc.name, f.Classes[:4], tc.want)
		}
	}
	again, err := scoreOnly.folds(7, c).Splits(20)
	if err != nil || !reflect.DeepEqual(before, again) {
		t.Errorf("score-only splits changed: %v", err)
	}
}

// TestCheckClassesAgainstFolds: a class with fewer participants (or
// groups) than folds is an error naming the label, the class, its count
// and cv.folds.
func TestCheckClassesAgainstFolds(t *testing.T) {
	c := &data.Cohort{Labels: []string{"dx"}, Classes: [][]string{{"control", "patient"}}}
	var groups []string
	for i := range 20 {
		class := 0
		if i < 4 {
			class = 1
		}
		c.Participants = append(c.Participants, &data.Participant{ID: fmt.Sprint(i), Labels: []int{class}})
		groups = append(groups, fmt.Sprintf("fam%d", i/2))
	}
	for _, tc := range []struct {
		name   string
		folds  int
		groups []string
		want   string
	}{
		{"enough", 4, nil, ""},
		{"too few members", 5, nil, `cv.folds: 5 folds, but class "patient" of label "dx" has only 4 participants`},
		{"too few groups", 3, groups, `cv.folds: 3 folds, but class "patient" of label "dx" has its 4 participants in only 2 groups (cohort.group)`},
	} {
		errs := CV{Folds: new(tc.folds)}.checkClasses(c, tc.groups)
		switch {
		case tc.want == "" && len(errs) > 0:
			t.Errorf("%s: %v", tc.name, errs)
		case tc.want != "" && (len(errs) != 1 || !contains(errs[0].Error(), tc.want)):
			t.Errorf("%s: errors %v, want one holding %q", tc.name, errs, tc.want)
		}
	}
}

// TestDesignCheckClasses: Design.Check reports a class too small for the
// folds among its other findings.
func TestDesignCheckClasses(t *testing.T) {
	c := toyCohort(20, 5, 1, false)
	c.Labels, c.Classes = []string{"dx"}, [][]string{{"a", "b"}}
	for i, p := range c.Participants {
		p.Labels = []int{0}
		if i < 3 {
			p.Labels[0] = 1
		}
	}
	d := toyDesign(ridgeAndMean()[0], ModelConfig{Name: "majority", Config: linear.Config{Majority: &linear.MajorityConfig{}}})
	d.CV.Folds = new(5)
	err := d.Check(c)
	if want := `cv.folds: 5 folds, but class "b" of label "dx" has only 3 participants`; err == nil || !contains(err.Error(), want) {
		t.Errorf("error %v, want one holding %q", err, want)
	}
	d.CV.Folds = new(3)
	if err := d.Check(c); err != nil {
		t.Errorf("3 folds: %v", err)
	}
}

// TestRareClassInEveryFold: a class held by one member each of exactly K
// families, which also hold the common class, is in every test fold.
func TestRareClassInEveryFold(t *testing.T) {
	const k = 4
	var classes []int
	var families []string
	for f := range 12 {
		for m := range 3 {
			class := 0
			if f%3 == 0 && m == 1 { // families 0, 3, 6, 9
				class = 1
			}
			classes = append(classes, class)
			families = append(families, fmt.Sprintf("fam%02d", f))
		}
	}
	for seed := uint64(0); seed < 10; seed++ {
		splits, err := Folds{K: k, Repeats: 2, Seed: seed, Classes: classes, Groups: families}.Splits(len(classes))
		if err != nil {
			t.Fatal(err)
		}
		for _, s := range splits {
			rare := 0
			for _, i := range s.Test {
				rare += classes[i]
			}
			if rare != 1 {
				t.Errorf("seed %d repeat %d fold %d: %d of the rare class, want 1", seed, s.Repeat, s.Fold, rare)
			}
		}
	}
}
