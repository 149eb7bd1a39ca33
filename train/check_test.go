package train

import (
	"context"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/model/linear"
)

// TestDesignCheck: every setting that cannot work on the cohort is
// reported before training, all at once, each naming its key; the
// counts follow from the cohort (20 participants, 10 families of two)
// and the fold sizes (common practice, no source).
func TestDesignCheck(t *testing.T) {
	ridgeFolds := func(k int) ModelConfig {
		return ModelConfig{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{InnerFolds: new(k)}}}
	}
	for _, tc := range []struct {
		name    string
		grouped bool
		edit    func(d *Design)
		want    []string // nil: no error
	}{
		{"fine", true, func(d *Design) {}, nil},
		{"leave one out", false, func(d *Design) { d.CV.Folds = new(20) }, nil},
		{"more folds than groups", true, func(d *Design) { d.CV.Folds = new(11) },
			[]string{"cv.folds: 11 folds, but the cohort has only 10 groups (cohort.group): use at most 10"}},
		{"more folds than participants", false, func(d *Design) { d.CV.Folds = new(21) },
			[]string{"cv.folds: 21 folds, but the cohort has only 20 participants"}},
		{"inner validation takes the fold", false, func(d *Design) { d.CV.InnerValidation = new(15.0) },
			[]string{"cv.inner_validation: 15 takes 15 of the 15 participants of the training fold of repeat 1, fold 1, leaving 0 to train on"}},
		{"inner validation leaves one", false, func(d *Design) { d.CV.InnerValidation = new(14.0) },
			[]string{"leaving 1 to train on; want at least 2"}},
		{"columns and inner folds at once", true, func(d *Design) {
			d.CV.Stratify, d.CV.Confounds = "gamma", []string{"iq", "age"}
			d.Models = []ModelConfig{ridgeFolds(9)}
			d.SetDefaults()
		}, []string{`cv.stratify: "gamma" is not a target of the cohort (targets: "alpha", "beta")`,
			`cv.confounds: "iq" is not a covariate of the cohort (covariates: "age")`,
			`model "ridge": model.ridge.inner_folds: 9, but the training fold of repeat 1, fold 1 holds only 7 groups (cohort.group)`}},
		{"inner folds against the part left beside inner validation", false, func(d *Design) {
			d.Models = []ModelConfig{ridgeFolds(14), {Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}}}
			d.InnerLoss = true
			d.SetDefaults()
		}, []string{`model "ridge": model.ridge.inner_folds: 14, but a training fold without its inner validation part (cv.inner_validation) holds only 12 participants`}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			d := toyDesign(ridgeAndMean()[:1]...)
			d.InnerLoss = false
			tc.edit(d)
			err := d.Check(toyCohort(20, 5, 1, tc.grouped))
			if tc.want == nil {
				if err != nil {
					t.Fatal(err)
				}
				return
			}
			if err == nil {
				t.Fatalf("no error, want %q", tc.want)
			}
			if got := len(strings.Split(err.Error(), "\n")); got != len(tc.want) {
				t.Errorf("%d problems, want %d: %v", got, len(tc.want), err)
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q\nlacks %q", err, w)
				}
			}
		})
	}
}

// TestLeaveOneOutRidge: leave-one-out (folds = participants) trains
// ridge on every fold; its activation patterns need two test participants
// (a covariance), so no fold has a map, and the run does not fail.
func TestLeaveOneOutRidge(t *testing.T) {
	d := toyDesign(ridgeAndMean()...)
	d.CV.Folds, d.CV.Repeats = new(12), new(1)
	res, err := (&Runner{Design: d, Cohort: toyCohort(12, 5, 2, false)}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Predictions) != 2*(12+10) {
		t.Errorf("%d predictions, want 2 models × (12 alpha + 10 beta scores; toyCohort leaves 2 missing)", len(res.Predictions))
	}
	for u, maps := range res.Importance {
		if maps != nil {
			t.Errorf("unit %+v has an importance map from one test participant", u)
		}
	}
}
