package experiment

import (
	"errors"
	"os"
	"path/filepath"
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
