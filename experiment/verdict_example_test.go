package experiment_test

import (
	"fmt"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
)

// night makes a run with one model on one score, as Read would return it
// from a run folder.
func night(dir string, r, mae float64) *experiment.Folder {
	g := eval.Group{Model: "ridge", Target: "recall"}
	g.Pooled.Pearson, g.Pooled.MAE = r, mae
	return &experiment.Folder{Dir: dir, Summary: &eval.Summary{Groups: []eval.Group{g}}}
}

func ExampleCheckDrift() {
	rule := experiment.Drift{Worsen: map[string]float64{"pearson_r": 0.1, "mae": 1}}
	rule.SetDefaults()
	before := night("runs/2026-03-01", 0.42, 5.1)
	after := night("runs/2026-03-02", 0.27, 5.3)
	for _, b := range experiment.CheckDrift(rule, before, after).Breaks {
		fmt.Println(b)
	}
	// Output:
	// model "ridge", target "recall": pooled pearson_r fell from 0.42 to 0.27 (by 0.15, more than drift.worsen.pearson_r = 0.1)
}
