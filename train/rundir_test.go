package train

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"testing"
)

func TestRunDirKeepsEarlierResults(t *testing.T) {
	final := filepath.Join(t.TempDir(), "run")
	d, err := OpenRunDir(final, false, false)
	if err != nil {
		t.Fatal(err)
	}
	if err := d.WriteFile("result.txt", []byte("first")); err != nil {
		t.Fatal(err)
	}
	if err := d.Commit(); err != nil {
		t.Fatal(err)
	}
	if _, err := OpenRunDir(final, false, false); !errors.Is(err, ErrRunExists) {
		t.Fatalf("reopening without force: %v, want ErrRunExists", err)
	}
	// A forced run that fails before committing leaves the first intact.
	d, err = OpenRunDir(final, true, false)
	if err != nil {
		t.Fatal(err)
	}
	d.WriteFile("result.txt", []byte("second"))
	if got, _ := os.ReadFile(filepath.Join(final, "result.txt")); string(got) != "first" {
		t.Fatalf("before commit the run folder holds %q, want the first run's", got)
	}
	// Its work folder is an interrupted run: refused unless resumed or forced.
	if _, err := OpenRunDir(final, false, false); err == nil {
		t.Fatal("an interrupted run's work folder was silently reused")
	}
	d, err = OpenRunDir(final, true, true)
	if err != nil {
		t.Fatal(err)
	}
	if err := d.Commit(); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(filepath.Join(final, "result.txt")); string(got) != "second" {
		t.Fatalf("after a forced commit the run folder holds %q, want the second run's", got)
	}
}

// TestResumeGivesIdenticalResults interrupts a run after its first units
// and resumes it from the checkpoints.
func TestResumeGivesIdenticalResults(t *testing.T) {
	cohort := toyCohort(40, 6, 3, false)
	exp := toyExperiment(ridgeAndMean()[:1]...)
	whole, err := (&Runner{Experiment: exp, Cohort: cohort, Jobs: 1}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	d, err := OpenRunDir(filepath.Join(t.TempDir(), "run"), false, false)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	stopAfter := 3
	r := &Runner{Experiment: exp, Cohort: cohort, Jobs: 1, Checkpoints: d.Checkpoints(),
		OnEvent: func(e Event) {
			if e.Kind == UnitFinished && e.Finished >= stopAfter {
				cancel()
			}
		}}
	if _, err := r.Run(ctx); !errors.Is(err, context.Canceled) {
		t.Fatalf("interrupted run returned %v, want context.Canceled", err)
	}
	resumed := 0
	r = &Runner{Experiment: exp, Cohort: cohort, Jobs: 2, Checkpoints: d.Checkpoints(),
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
}

// TestUnitsRunSeparatelyMerge runs every unit alone, as the tasks of a
// batch job would, then merges them from their checkpoints.
func TestUnitsRunSeparatelyMerge(t *testing.T) {
	cohort := toyCohort(40, 6, 4, true)
	exp := toyExperiment(ridgeAndMean()...)
	whole, err := (&Runner{Experiment: exp, Cohort: cohort}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	d, err := OpenRunDir(filepath.Join(t.TempDir(), "run"), false, false)
	if err != nil {
		t.Fatal(err)
	}
	units, err := (&Runner{Experiment: exp, Cohort: cohort}).Units()
	if err != nil {
		t.Fatal(err)
	}
	merge := &Runner{Experiment: exp, Cohort: cohort, Checkpoints: d.Checkpoints(), FromCheckpoints: true}
	for k := range units {
		if k == 1 {
			var missing *MissingUnitsError
			if _, err := merge.Run(context.Background()); !errors.As(err, &missing) || len(missing.Units) != len(units)-1 {
				t.Fatalf("merge with one unit done: %v, want %d missing units", err, len(units)-1)
			}
		}
		one := &Runner{Experiment: exp, Cohort: cohort, Checkpoints: d.Checkpoints(), Select: []int{k}}
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
}
