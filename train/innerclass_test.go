package train

import (
	"context"
	"fmt"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// TestInnerValidationByClass checks the class proportions of both parts
// of the stratified inner split: each part holds every class of at least
// two training participants, and (without groups) the validation part
// holds each class's largest-remainder quota of want·n_c/n exactly, so
// that its proportions differ from the training fold's by less than
// 1/|valid| (common practice, no source).
func TestInnerValidationByClass(t *testing.T) {
	tests := []struct {
		name      string
		counts    []int // training participants per class
		missing   int   // training participants without the label
		count     int
		fraction  float64
		families  int // > 0: families of this size, classes mixed within
		wantValid []int
	}{
		{name: "30/10, a quarter", counts: []int{30, 10}, fraction: 0.25, wantValid: []int{8, 2}},
		{name: "rare class raised to one", counts: []int{37, 3}, fraction: 0.1, wantValid: []int{4, 1}}, // 3.7 → 4, 0.3 → 0 → 1
		{name: "three classes by count", counts: []int{20, 12, 8}, count: 10, wantValid: []int{5, 3, 2}},
		{name: "missing labels stay out", counts: []int{16, 8}, missing: 6, fraction: 0.25, wantValid: []int{4, 2}},
		{name: "a class of one stays in training", counts: []int{19, 1}, fraction: 0.2, wantValid: []int{4, 0}},
		{name: "families of two", counts: []int{40, 20}, fraction: 0.2, families: 2},
		{name: "families of three, three classes", counts: []int{30, 18, 12}, fraction: 0.25, families: 3},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var classes []int
			for c, n := range tt.counts {
				for range n {
					classes = append(classes, c)
				}
			}
			for range tt.missing {
				classes = append(classes, -1)
			}
			// Interleave a test fold: every third cohort participant is
			// not in train, and its class must not matter.
			var cohortClasses []int
			var train []int
			for _, c := range classes {
				if len(cohortClasses)%3 == 2 {
					cohortClasses = append(cohortClasses, 0)
				}
				train = append(train, len(cohortClasses))
				cohortClasses = append(cohortClasses, c)
			}
			var groups []string
			if tt.families > 0 {
				// Shuffle classes into families deterministically: a
				// family holds participants train[j] with j ≡ f mod F.
				F := len(train) / tt.families
				groups = make([]string, len(cohortClasses))
				for i := range groups {
					groups[i] = fmt.Sprint("solo", i)
				}
				for j, i := range train {
					groups[i] = fmt.Sprint("family", j%F)
				}
			}
			for seed := range uint64(5) {
				fit, valid := InnerValidationByClass(train, groups, cohortClasses, tt.count, tt.fraction, seed)
				if got := slices.Sorted(slices.Values(append(slices.Clone(fit), valid...))); !slices.Equal(got, train) {
					t.Fatalf("seed %d: fit and valid are not the training fold", seed)
				}
				if !slices.IsSorted(fit) || !slices.IsSorted(valid) {
					t.Fatalf("seed %d: parts not sorted", seed)
				}
				inFit, inValid := make([]int, len(tt.counts)), make([]int, len(tt.counts))
				nValid := 0
				for _, i := range valid {
					if c := cohortClasses[i]; c >= 0 {
						inValid[c]++
						nValid++
					}
				}
				for _, i := range fit {
					if c := cohortClasses[i]; c >= 0 {
						inFit[c]++
					}
				}
				t.Logf("seed %d: valid %v, fit %v", seed, inValid, inFit)
				if tt.wantValid != nil && !slices.Equal(inValid, tt.wantValid) {
					t.Errorf("seed %d: validation classes %v, want %v", seed, inValid, tt.wantValid)
				}
				if tt.missing > 0 && len(valid) != nValid {
					t.Errorf("seed %d: %d participants without a label in the validation part", seed, len(valid)-nValid)
				}
				total := 0
				for _, n := range tt.counts {
					total += n
				}
				for c, n := range tt.counts {
					if n >= 2 && (inValid[c] == 0 || inFit[c] == 0) {
						t.Errorf("seed %d: class %d: %d in validation, %d in training, want both > 0", seed, c, inValid[c], inFit[c])
					}
					// Proportions: within one participant of the quota
					// without groups; within one family's worth with.
					slack := 1.0
					if tt.families > 0 {
						slack = float64(tt.families)
					}
					if n >= 2 && math.Abs(float64(inValid[c])-float64(nValid)*float64(n)/float64(total)) > slack+1e-9 {
						t.Errorf("seed %d: class %d: %d of %d in validation, proportion %.3f, training fold %.3f", seed, c, inValid[c], nValid,
							float64(inValid[c])/float64(nValid), float64(n)/float64(total))
					}
				}
				if groups != nil {
					side := make(map[string]bool)
					for _, i := range valid {
						side[groups[i]] = true
					}
					for _, i := range fit {
						if side[groups[i]] {
							t.Fatalf("seed %d: group %s on both sides", seed, groups[i])
						}
					}
				}
			}
		})
	}
}

// TestInnerValidationByClassNone checks that no inner validation part
// (fraction 0, count 0) leaves the whole fold to train on.
func TestInnerValidationByClassNone(t *testing.T) {
	fit, valid := InnerValidationByClass([]int{0, 1, 2, 3}, nil, []int{0, 1, 0, 1}, 0, 0, 1)
	if valid != nil || !slices.Equal(fit, []int{0, 1, 2, 3}) {
		t.Fatalf("fit %v, valid %v", fit, valid)
	}
}

// TestRunStratifiesLabelInnerValidation runs a classifier beside the
// scores, with families and an inner validation part of a quarter: every
// classifier's training and validation parts hold both classes, in
// proportions within one family of the fold's, with families whole, and
// together they are the training fold's labelled participants, while the
// scores keep InnerValidation's split.
func TestRunStratifiesLabelInnerValidation(t *testing.T) {
	cohort := withLabel(toyCohort(80, 5, 3, true), 4)
	exp := toyDesign(ridgeAndMean()[:1]...)
	exp.CV.InnerValidation = new(0.25)
	type fitted struct{ train, valid model.LabelledSet }
	var fits []fitted
	spy := func(ModelConfig, int, int, int64) (model.Classifier, error) {
		m := &recording{}
		m.done = func(train, valid model.LabelledSet) { fits = append(fits, fitted{train, valid}) }
		return m, nil
	}
	res, err := (&Runner{Design: exp, Cohort: cohort, Jobs: 1, newClassifier: spy}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	// Jobs 1: per split the unit's classifier, then the baseline's fresh
	// one, fitted on the training part alone.
	if len(fits) != 2*len(res.Splits) {
		t.Fatalf("%d fits for %d splits", len(fits), len(res.Splits))
	}
	byID := make(map[string]*data.Participant)
	for _, p := range cohort.Participants {
		byID[p.ID] = p
	}
	for s, split := range res.Splits {
		f := fits[2*s]
		var want []string
		for _, i := range split.Train {
			if p := cohort.Participants[i]; p.Labels[0] >= 0 {
				want = append(want, p.ID)
			}
		}
		var got []string
		count := func(set model.LabelledSet) []int {
			n := make([]int, 2)
			for k, p := range set.Participants {
				got = append(got, p.ID)
				n[set.Labels[k]]++
			}
			return n
		}
		inTrain, inValid := count(f.train), count(f.valid)
		slices.Sort(want)
		slices.Sort(got)
		if !slices.Equal(got, want) {
			t.Fatalf("repeat %d, fold %d: the classifier saw %d participants, want the %d labelled ones of the training fold", split.Repeat+1, split.Fold+1, len(got), len(want))
		}
		t.Logf("repeat %d, fold %d: training part %v, validation part %v", split.Repeat+1, split.Fold+1, inTrain, inValid)
		nv := inValid[0] + inValid[1]
		share := float64(inTrain[1]+inValid[1]) / float64(len(want))
		for c := range 2 {
			if inTrain[c] == 0 || inValid[c] == 0 {
				t.Errorf("repeat %d, fold %d: class %d: %d in training, %d in validation", split.Repeat+1, split.Fold+1, c, inTrain[c], inValid[c])
			}
		}
		// toyCohort's families have two members.
		if d := math.Abs(float64(inValid[1]) - share*float64(nv)); d > 2 {
			t.Errorf("repeat %d, fold %d: %d of %d validation participants of class 1, %.1f expected", split.Repeat+1, split.Fold+1, inValid[1], nv, share*float64(nv))
		}
		side := make(map[string]bool)
		for _, p := range f.valid.Participants {
			side[byID[p.ID].Group] = true
		}
		for _, p := range f.train.Participants {
			if g := byID[p.ID].Group; g != "" && side[g] {
				t.Fatalf("repeat %d, fold %d: family %s on both sides", split.Repeat+1, split.Fold+1, g)
			}
		}
		if fresh := fits[2*s+1]; fresh.valid.Len() != 0 || !slices.EqualFunc(fresh.train.Participants, f.train.Participants,
			func(a, b *data.Participant) bool { return a.ID == b.ID }) {
			t.Errorf("repeat %d, fold %d: the inner log loss's classifier was not fitted on the stratified training part", split.Repeat+1, split.Fold+1)
		}
	}
}

// recording is a classifier that reports what it was fitted on and
// predicts the uniform distribution.
type recording struct {
	classes int
	done    func(train, valid model.LabelledSet)
}

func (m *recording) Fit(_ context.Context, train, valid model.LabelledSet) error {
	m.classes = train.Classes
	m.done(train, valid)
	return nil
}

func (m *recording) PredictProba(ps []*data.Participant) (*mat.Dense, error) {
	out := mat.NewDense(len(ps), m.classes, nil)
	for i := range ps {
		for k := range m.classes {
			out.Set(i, k, 1/float64(m.classes))
		}
	}
	return out, nil
}
