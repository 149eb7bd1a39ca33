package train

import (
	"context"
	"errors"
	"math"
	"os"
	"reflect"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/model"
)

// TestResumeGivesIdenticalResults interrupts a run after its first units
// and resumes it from the checkpoints: predictions, grid choices and inner
// validation errors are those of an uninterrupted run.
func TestResumeGivesIdenticalResults(t *testing.T) {
	cohort := toyCohort(40, 6, 3, false)
	exp := toyDesign(ridgeAndMean()...)
	whole, err := (&Runner{Design: exp, Cohort: cohort, Jobs: 1}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	d := NewCheckpoints(t.TempDir())
	ctx, cancel := context.WithCancel(context.Background())
	stopAfter := 3
	r := &Runner{Design: exp, Cohort: cohort, Jobs: 1, Checkpoints: d,
		OnEvent: func(e Event) {
			if e.Kind == UnitFinished && e.Finished >= stopAfter {
				cancel()
			}
		}}
	if _, err := r.Run(ctx); !errors.Is(err, context.Canceled) {
		t.Fatalf("interrupted run returned %v, want context.Canceled", err)
	}
	resumed := 0
	r = &Runner{Design: exp, Cohort: cohort, Jobs: 2, Checkpoints: d,
		OnEvent: func(e Event) {
			if e.Kind == UnitFinished && e.Resumed {
				resumed++
			}
		}}
	res, err := r.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if resumed < stopAfter {
		t.Errorf("%d units read from checkpoints, want at least %d", resumed, stopAfter)
	}
	if !reflect.DeepEqual(res.Predictions, whole.Predictions) {
		t.Fatal("resumed run differs from the uninterrupted one")
	}
	if len(whole.Choices) == 0 || len(whole.InnerLoss) == 0 {
		t.Fatal("the run has no choices or inner losses to resume")
	}
	sameDiagnostics(t, "resumed run", res, whole)
}

// TestUnitsRunSeparatelyMerge runs every unit alone, as the tasks of a
// batch job would, then merges them from their checkpoints.
func TestUnitsRunSeparatelyMerge(t *testing.T) {
	cohort := toyCohort(40, 6, 4, true)
	exp := toyDesign(ridgeAndMean()...)
	whole, err := (&Runner{Design: exp, Cohort: cohort}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	d := NewCheckpoints(t.TempDir())
	units, err := (&Runner{Design: exp, Cohort: cohort}).Units()
	if err != nil {
		t.Fatal(err)
	}
	merge := &Runner{Design: exp, Cohort: cohort, Checkpoints: d, FromCheckpoints: true}
	for k := range units {
		if k == 1 {
			var missing *MissingUnitsError
			if _, err := merge.Run(context.Background()); !errors.As(err, &missing) || len(missing.Units) != len(units)-1 {
				t.Fatalf("merge with one unit done: %v, want %d missing units", err, len(units)-1)
			}
		}
		one := &Runner{Design: exp, Cohort: cohort, Checkpoints: d, Select: []int{k}}
		if _, err := one.Run(context.Background()); err != nil {
			t.Fatal(err)
		}
	}
	merged, err := merge.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(merged.Predictions, whole.Predictions) {
		t.Fatal("merged units differ from a single run")
	}
	if len(whole.Choices) == 0 || len(whole.InnerLoss) == 0 {
		t.Fatal("the run has no choices or inner losses to merge")
	}
	sameDiagnostics(t, "merged units", merged, whole)
}

// TestCheckpointDiagnostics: a unit's grid choices and inner validation
// errors survive its checkpoint exactly, NaN as JSON null, and a
// checkpoint written before they were kept still loads, without them.
func TestCheckpointDiagnostics(t *testing.T) {
	c := &Checkpoints{dir: t.TempDir()}
	u := Unit{Model: 1, Split: 2, Repeat: 0, Fold: 2}
	tenth := 0.1 // a variable: 0.1 + 0.2 in float64, not the exact constant 0.3
	out := unitOutput{
		predictions: []model.Prediction{{ParticipantID: "sub-1", Model: "ridge", Target: "alpha", Fold: 2, Observed: 1.5, Predicted: 0.1}},
		choices: [][]model.Choice{
			{{Setting: "alphas", Value: 1000, Min: 0.001, Max: 1000}},
			{{Setting: "alphas", Value: 0.1, Min: 0.001, Max: 1000}},
		},
		innerLoss: []float64{tenth + 0.2, math.NaN()},
	}
	if err := c.save("ridge", u, out); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(c.path("ridge", u))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(raw), `"inner_loss":[0.30000000000000004,null]`) {
		t.Errorf("checkpoint %s: want inner_loss [0.30000000000000004,null]", raw)
	}
	got, ok, err := c.load("ridge", u)
	if err != nil || !ok {
		t.Fatalf("load: %v, %v", ok, err)
	}
	sameDiagnostics(t, "loaded checkpoint",
		&Result{Choices: map[Unit][][]model.Choice{u: got.choices}, InnerLoss: map[Unit][]float64{u: got.innerLoss}},
		&Result{Choices: map[Unit][][]model.Choice{u: out.choices}, InnerLoss: map[Unit][]float64{u: out.innerLoss}})

	old := `{"model":"ridge","repeat":1,"fold":3,"predictions":[{"participant_id":"sub-1","target":"alpha","observed":1.5,"predicted":0.1}]}`
	if err := os.WriteFile(c.path("ridge", u), []byte(old), 0o644); err != nil {
		t.Fatal(err)
	}
	got, ok, err = c.load("ridge", u)
	if err != nil || !ok {
		t.Fatalf("load of an older checkpoint: %v, %v", ok, err)
	}
	if got.choices != nil || got.innerLoss != nil || !reflect.DeepEqual(got.predictions, out.predictions) {
		t.Fatalf("older checkpoint loaded as %+v", got)
	}
}

// A checkpoint keeps each epoch's ensemble member (model.Epoch.Member),
// and a single model's epochs come back with member 0.
func TestCheckpointKeepsMembers(t *testing.T) {
	d := NewCheckpoints(t.TempDir())
	u := Unit{Repeat: 1, Fold: 2}
	h := []model.Epoch{{Epoch: 1, TrainLoss: 0.5, ValidLoss: 0.4, Best: true, Member: 1},
		{Epoch: 1, TrainLoss: 0.6, ValidLoss: math.NaN(), Member: 2}, {Epoch: 2, TrainLoss: 0.3, ValidLoss: 0.2}}
	if err := d.save("net", u, unitOutput{history: h}); err != nil {
		t.Fatal(err)
	}
	out, ok, err := d.load("net", u)
	if err != nil || !ok {
		t.Fatalf("load: %v %v", ok, err)
	}
	for i, e := range out.history {
		if e.Member != h[i].Member || e.Epoch != h[i].Epoch || e.Best != h[i].Best || math.IsNaN(e.ValidLoss) != math.IsNaN(h[i].ValidLoss) {
			t.Errorf("epoch %d: %+v, want %+v", i, e, h[i])
		}
	}
}
