package experiment

import (
	"os"
	"path/filepath"
	"slices"
	"sync"
	"testing"
	"time"
)

// TestRunNameNeverHidden: run folders are named after the experiment (its
// name key, else its file, else its folder), never ".-TIME".
func TestRunNameNeverHidden(t *testing.T) {
	root := t.TempDir()
	cohort := filepath.Join(root, "lakemoor")
	hidden := filepath.Join(root, ".cohort")
	for _, d := range []string{cohort, hidden} {
		if err := os.Mkdir(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	t.Chdir(cohort)
	for _, tt := range []struct{ path, name, want string }{
		{"experiment.toml", "", "lakemoor"},
		{"./experiment.toml", "", "lakemoor"},
		{"../lakemoor/experiment.toml", "", "lakemoor"},
		{"ablations.toml", "", "ablations"},
		{"/data/x/study.v2.toml", "", "study.v2"},
		{"experiment.toml", "nightly", "nightly"},
		{filepath.Join(hidden, "experiment.toml"), "", "cohort"},
		{".toml", "", "experiment"},
		{"/experiment.toml", "", "experiment"},
	} {
		if got := RunName(tt.path, tt.name); got != tt.want {
			t.Errorf("RunName(%q, %q) = %q, want %q", tt.path, tt.name, got, tt.want)
		}
	}
	now := time.Date(2026, 3, 1, 9, 5, 7, 0, time.Local)
	if got, want := DefaultOut("experiment.toml", "", now), filepath.Join("runs", "lakemoor-20260301-090507"); got != want {
		t.Errorf("DefaultOut = %q, want %q", got, want)
	}
}

// TestCreateRunDirSameSecond: runs started in the same second, one after
// the other or at once, each get a folder of their own: base, base-2, ...
func TestCreateRunDirSameSecond(t *testing.T) {
	base := filepath.Join(t.TempDir(), "runs", "demo-20260301-090507")
	first, err := CreateRunDir(base)
	if err != nil {
		t.Fatal(err)
	}
	if first.Final != base {
		t.Errorf("first run in %s, want %s", first.Final, base)
	}
	if err := first.Commit(); err != nil {
		t.Fatal(err)
	}
	const n = 8
	finals := make([]string, n)
	var wg sync.WaitGroup
	for i := range n {
		wg.Go(func() {
			d, err := CreateRunDir(base)
			if err != nil {
				t.Error(err)
				return
			}
			finals[i] = d.Final
		})
	}
	wg.Wait()
	slices.Sort(finals)
	if len(slices.Compact(slices.Clone(finals))) != n {
		t.Fatalf("concurrent runs share folders: %v", finals)
	}
	for _, f := range finals {
		if f == base {
			t.Errorf("a second run was given the committed folder %s", f)
		}
		if _, err := os.Stat(f + ".partial"); err != nil {
			t.Errorf("work folder of %s: %v", f, err)
		}
	}
	if want := base + "-2"; !slices.Contains(finals, want) {
		t.Errorf("suffixes %v lack %s", finals, want)
	}
}

func TestExperimentNameKey(t *testing.T) {
	for _, tt := range []struct {
		name string
		ok   bool
	}{{"lakemoor-nightly", true}, {"../x", false}, {".hidden", false}, {"a/b", false}, {" x", false}} {
		_, err := ParseExperiment([]byte("name = \"" + tt.name + "\"\n" + minimalCohort))
		if (err == nil) != tt.ok {
			t.Errorf("name %q: error %v", tt.name, err)
		}
	}
}
