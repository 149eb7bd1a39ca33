package experiment

import (
	"path/filepath"
	"testing"

	"github.com/skein-neuro/skein/data"
)

// TestExampleFilesLoad: every experiment file under examples/ parses and
// its cohort loads.
func TestExampleFilesLoad(t *testing.T) {
	files, _ := filepath.Glob("../examples/*.toml")
	more, _ := filepath.Glob("../examples/*/experiment.toml")
	files = append(files, more...)
	if len(files) < 3 {
		t.Fatalf("found only %v", files)
	}
	for _, f := range files {
		exp, err := ReadExperiment(f)
		if err != nil {
			t.Errorf("%v", err)
			continue
		}
		if _, err := data.Load(exp.Cohort, exp.Preprocess, exp.Dir); err != nil {
			t.Errorf("%s: %v", f, err)
		}
	}
}
