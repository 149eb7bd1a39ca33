package train

import (
	"context"
	"reflect"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/model/linear"
)

func TestSubsetSplitsNestedAndGroupsWhole(t *testing.T) {
	c := toyCohort(61, 4, 3, true) // families of two, one participant alone
	groups := Groups(c)
	splits, err := Folds{K: 3, Repeats: 2, Seed: 5, Groups: groups}.Splits(len(c.Participants))
	if err != nil {
		t.Fatal(err)
	}
	fractions := []float64{0.1, 0.25, 0.5, 0.75, 1}
	subsets := SubsetSplits(splits, groups, fractions, 9)
	for s, split := range splits {
		for fi, f := range fractions {
			sub := subsets[fi][s]
			if !slices.Equal(sub.Test, split.Test) || sub.Repeat != split.Repeat || sub.Fold != split.Fold {
				t.Fatalf("fraction %g, split %d: test fold changed", f, s)
			}
			if len(sub.Train) > len(split.Train) || len(sub.Train) == 0 {
				t.Errorf("fraction %g, split %d: %d training participants of a fold of %d", f, s, len(sub.Train), len(split.Train))
			}
			if f == 1 && !slices.Equal(sub.Train, split.Train) {
				t.Errorf("fraction 1, split %d: subset is not the whole training fold", s)
			}
			// Within two (one family) of the asked size.
			if want := f * float64(len(split.Train)); float64(len(sub.Train)) < want-2 || float64(len(sub.Train)) > want+2 {
				t.Errorf("fraction %g, split %d: %d participants, want about %.1f", f, s, len(sub.Train), want)
			}
			in := make(map[int]bool)
			for _, i := range sub.Train {
				if !slices.Contains(split.Train, i) {
					t.Fatalf("fraction %g, split %d: participant %d is not in the training fold", f, s, i)
				}
				in[i] = true
			}
			for _, i := range sub.Train {
				for _, j := range split.Train {
					if groups[i] == groups[j] && !in[j] {
						t.Errorf("fraction %g, split %d: family %s cut", f, s, groups[i])
					}
				}
			}
			if fi > 0 {
				for _, i := range subsets[fi-1][s].Train {
					if !in[i] {
						t.Errorf("fraction %g, split %d: participant %d of the smaller subset is missing", f, s, i)
					}
				}
			}
		}
	}
	again := SubsetSplits(splits, groups, fractions, 9)
	if !reflect.DeepEqual(subsets, again) {
		t.Error("SubsetSplits is not reproducible")
	}
}

// TestSampleSizeCurveRises: on a synthetic cohort with a planted signal,
// ridge's pooled r does not fall as the training subset grows (within
// noise: a tolerance of 0.1 on 90 participants, loose on purpose), and the
// whole training fold reproduces the ordinary run.
func TestSampleSizeCurveRises(t *testing.T) {
	c := preprocessed(t, synth.Config{N: 90, P: 10, Seed: 21, Ceiling: 0.9})
	ridge := ModelConfig{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}}
	exp := &Design{Seed: 4, CV: CV{Folds: new(3), Repeats: new(1)}, Models: []ModelConfig{ridge}}
	exp.SetDefaults()
	r := &Runner{Design: exp, Cohort: c}
	full, err := r.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	fractions := []float64{0.25, 0.5, 1}
	runs, err := r.RunSampleSizes(context.Background(), fractions, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(runs[2].Predictions, full.Predictions) {
		t.Error("fraction 1 differs from the ordinary run")
	}
	rs := make([]float64, len(runs))
	for k, run := range runs {
		var obs, pred []float64
		for _, p := range run.Predictions {
			if p.Target == c.Targets[0] {
				obs = append(obs, p.Observed)
				pred = append(pred, p.Predicted)
			}
		}
		rs[k] = stat.Correlation(obs, pred, nil)
		for s, split := range run.Splits {
			if len(split.Train) > len(full.Splits[s].Train) {
				t.Errorf("fraction %g: subset of %d from a fold of %d", run.Fraction, len(split.Train), len(full.Splits[s].Train))
			}
		}
	}
	t.Logf("pooled r by fraction %v: %.3f", fractions, rs)
	for k := 1; k < len(rs); k++ {
		if rs[k] < rs[k-1]-0.1 {
			t.Errorf("pooled r fell from %.3f (fraction %g) to %.3f (fraction %g)", rs[k-1], fractions[k-1], rs[k], fractions[k])
		}
	}
	if rs[len(rs)-1] < 0.3 {
		t.Errorf("pooled r on the whole training folds is %.3f: the planted signal did not show", rs[len(rs)-1])
	}
}
