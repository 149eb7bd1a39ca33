package train

import (
	"context"
	"reflect"
	"testing"

	"github.com/skein-neuro/skein/model/linear"
)

// TestRunLabelImportance runs logistic regression and a small network
// (which learns from standardized edges, so its maps are measured from the
// standardized zero matrix) on a binary label: every unit of each has one
// map, of the log-odds of class 1, symmetric p × p; a run resumed from the
// checkpoints reads back the same maps.
func TestRunLabelImportance(t *testing.T) {
	cohort := withLabel(toyCohort(40, 6, 5, false), 5)
	cohort.Targets = nil
	for _, p := range cohort.Participants {
		p.Scores = nil
	}
	logistic := ModelConfig{Name: "logistic", Config: linear.Config{Logistic: &linear.LogisticConfig{}}}
	logistic.SetDefaults()
	exp := toyDesign(logistic, tinyNetwork("network"))
	exp.CV.Repeats = new(1)
	exp.LabelLoss = false
	d := NewCheckpoints(t.TempDir())
	res, err := (&Runner{Design: exp, Cohort: cohort, Jobs: 2, Checkpoints: d}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(res.LabelImportance) != len(res.Units) {
		t.Fatalf("%d units with label importance, want all %d", len(res.LabelImportance), len(res.Units))
	}
	for u, maps := range res.LabelImportance {
		if len(maps) != 1 {
			t.Fatalf("%s, fold %d: %d maps, want 1 (one view, the positive class)", exp.Models[u.Model].Name, u.Fold+1, len(maps))
		}
		m := maps[0]
		if m.Label != "diagnosis" || m.Class != 1 || m.View != 0 {
			t.Errorf("%s, fold %d: map of label %q, class %d, view %d; want diagnosis, 1, 0", exp.Models[u.Model].Name, u.Fold+1, m.Label, m.Class, m.View)
		}
		if r, c := m.Map.Dims(); r != 6 || c != 6 {
			t.Fatalf("map is %d × %d", r, c)
		}
		var nonzero bool
		for i := range 6 {
			for j := range 6 {
				if m.Map.At(i, j) != m.Map.At(j, i) {
					t.Fatalf("map not symmetric at (%d, %d)", i, j)
				}
				nonzero = nonzero || m.Map.At(i, j) != 0
			}
		}
		if !nonzero {
			t.Errorf("%s, fold %d: map of zeros", exp.Models[u.Model].Name, u.Fold+1)
		}
	}
	resumed, err := (&Runner{Design: exp, Cohort: cohort, Jobs: 1, Checkpoints: d, FromCheckpoints: true}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(resumed.LabelImportance, res.LabelImportance) {
		t.Error("maps read back from the checkpoints differ from the run's")
	}
	u := res.Units[0]
	cp, err := ReadCheckpoint(d.path(exp.Models[u.Model].Name, u))
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(cp.LabelImportance, res.LabelImportance[u]) {
		t.Error("ReadCheckpoint gives other maps than the run's")
	}
}
