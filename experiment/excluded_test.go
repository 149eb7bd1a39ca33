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

// TestSummaryListsExcluded: summary.md lists every excluded participant
// with its reason, escaped, and names models and targets escaped.
func TestSummaryListsExcluded(t *testing.T) {
	sc, err := synth.Generate(synth.Config{N: 30, P: 8, Seed: 5, Targets: 1, TimePoints: 60})
	if err != nil {
		t.Fatal(err)
	}
	if err := sc.Preprocess(data.Preprocess{}); err != nil {
		t.Fatal(err)
	}
	sc.Cohort.Targets = []string{"<b>recall</b>"}
	sc.Cohort.Excluded = []data.Exclusion{
		{ID: "sub-31", Reason: "excluded in the experiment file (cohort.exclude): dead region 12"},
		{ID: "sub-32", Reason: `failed a check (cohort.on_bad_participant = "exclude"): fc/sub-32_fc.tsv: entry (3, 4) is NaN`},
	}
	exp := &Experiment{Seed: 5, CV: train.CV{Folds: new(3), Repeats: new(1)},
		Models: []train.ModelConfig{{Name: "mean_<i>x</i>", Config: linear.Config{Mean: &linear.MeanConfig{}}}}}
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
	var b strings.Builder
	if err := rep.WriteMarkdown(&b); err != nil {
		t.Fatal(err)
	}
	md := b.String()
	for _, want := range []string{
		"30 participants (2 excluded)",
		"## Excluded participants\n\n- sub-31: excluded in the experiment file (cohort.exclude): dead region 12\n" +
			"- sub-32: failed a check (cohort.on\\_bad\\_participant = \"exclude\"): fc/sub-32\\_fc.tsv: entry (3, 4) is NaN\n",
		`### \<b\>recall\</b\>`, `| mean\_\<i\>x\</i\> |`,
	} {
		if !strings.Contains(md, want) {
			t.Errorf("summary.md lacks %q:\n%s", want, md)
		}
	}
	if strings.Contains(md, "<b>") || strings.Contains(md, "<i>") {
		t.Errorf("summary.md holds raw HTML:\n%s", md)
	}
}
