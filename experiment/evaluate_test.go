package experiment

import (
	"context"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

// TestRunCautions: each statistical caution appears when its cause is
// present and not otherwise.
func TestRunCautions(t *testing.T) {
	tests := []struct {
		name       string
		n, family  int
		confounds  []string
		perms      int
		want, none []string
	}{
		{
			// 40 participants in 5 families of 8 for 5 folds × 2 repeats:
			// both repeats deal the same families to the folds. Null
			// scores push ridge to its largest penalty; the mean
			// predictor with confounds regressed out is constant.
			name: "five families, null scores", n: 40, family: 8, confounds: []string{"age", "sex"}, perms: 19,
			want: []string{"Small test folds", "Repeated splits: 5 of 10 folds", "Few groups", "Grid edge: for score",
				"the largest alphas value", "Constant predictions: mean on score", "Few permutations: with 19 permutations"},
		},
		{
			name: "unrelated participants", n: 150, perms: 99,
			none: []string{"Small test folds", "Repeated splits", "Few groups", "Constant predictions", "Few permutations"},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sc, err := synth.Generate(synth.Config{N: tt.n, P: 8, Seed: 3, Null: true, Targets: 1, TimePoints: 100, FamilySize: tt.family})
			if err != nil {
				t.Fatal(err)
			}
			if err := sc.Preprocess(data.Preprocess{}); err != nil {
				t.Fatal(err)
			}
			sc.Cohort.Targets = []string{"score"}
			exp := &Experiment{
				Seed: 3,
				CV:   train.CV{Folds: new(5), Repeats: new(2), Confounds: tt.confounds},
				Models: []train.ModelConfig{
					{Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}},
					{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{Alphas: []float64{1e-3, 1e-2, 1e-1}, InnerFolds: new(2)}}},
				},
				Permutation: Permutation{Count: tt.perms},
			}
			exp.SetDefaults()
			r := &train.Runner{Design: exp.Design(), Cohort: sc.Cohort, Jobs: 1}
			res, err := r.Run(context.Background())
			if err != nil {
				t.Fatal(err)
			}
			rep, err := Evaluate(context.Background(), exp, r, res, 0)
			if err != nil {
				t.Fatal(err)
			}
			var md strings.Builder
			if err := rep.WriteMarkdown(&md); err != nil {
				t.Fatal(err)
			}
			all := strings.Join(rep.Cautions, "\n")
			for _, want := range tt.want {
				if !strings.Contains(all, want) {
					t.Errorf("no caution saying %q; cautions:\n%s", want, all)
				}
			}
			for _, not := range tt.none {
				if strings.Contains(all, not) {
					t.Errorf("caution %q without its cause; cautions:\n%s", not, all)
				}
			}
			// summary.md opens with the answer (Answer): neither model
			// reads the structural connectome.
			if want := "# skein run summary\n\n" + Answer(exp, rep.Comparisons) + "\n\n"; !strings.HasPrefix(md.String(), want) ||
				!strings.Contains(want, "No model of this experiment learns from both") {
				t.Errorf("summary.md does not open with the answer:\n%s", md.String())
			}
			if len(tt.want) > 0 && !strings.Contains(md.String(), "## Cautions for this run\n\n- ") {
				t.Errorf("summary.md lists no cautions:\n%s", md.String())
			}
		})
	}
}
