package experiment

import (
	"path/filepath"
	"reflect"
	"slices"
	"testing"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/train"
)

// TestExampleFilesLoad: every experiment file under examples/ parses, its
// cohort loads, and but for reference.toml (a list of every key, with a
// model of every kind, whether its cohort has the targets for it or not)
// it passes the checks skein check runs (CheckInputs: the settings and
// models against the cohort, such as a label no model learns).
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
		if filepath.Base(f) == "reference.toml" {
			if _, err := data.Load(exp.Cohort, exp.Preprocess, exp.Dir); err != nil {
				t.Errorf("%s: %v", f, err)
			}
			continue
		}
		if _, err := CheckInputs(f, exp); err != nil {
			t.Errorf("%s: %v", f, err)
		}
	}
}

// TestDemoClassifies: the demo learns its diagnosis with every
// classifying baseline kind (majority, logistic, kernel_logistic), so its
// summary has a reference baseline for the label.
func TestDemoClassifies(t *testing.T) {
	demo, err := ReadExperiment("../examples/demo/experiment.toml")
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(demo.Cohort.Labels, []string{"diagnosis"}) {
		t.Fatalf("demo labels %v, want [diagnosis]", demo.Cohort.Labels)
	}
	kinds := map[string]bool{}
	for _, m := range demo.Models {
		kinds[m.Kind()] = true
	}
	for _, k := range []string{"majority", "logistic", "kernel_logistic"} {
		if !kinds[k] {
			t.Errorf("the demo has no %s model for its diagnosis", k)
		}
	}
}

// TestBenchLabels: bench/labels.toml (run by bench/labels.sh on a cohort
// it generates) parses, learns labels only, and runs the recommended
// networks of examples/networks.toml as they are.
func TestBenchLabels(t *testing.T) {
	bench, err := ReadExperiment("../bench/labels.toml")
	if err != nil {
		t.Fatal(err)
	}
	if len(bench.Cohort.Targets) != 0 || len(bench.Cohort.Labels) != 3 {
		t.Errorf("bench/labels.toml: targets %v, labels %v; want no targets and three labels", bench.Cohort.Targets, bench.Cohort.Labels)
	}
	rec, err := ReadExperiment("../examples/networks.toml")
	if err != nil {
		t.Fatal(err)
	}
	nets := map[string]*train.ModelConfig{}
	for i, m := range bench.Models {
		if m.Network != nil {
			nets[m.Name] = &bench.Models[i]
		}
	}
	if len(nets) != len(rec.Models) {
		t.Errorf("bench/labels.toml runs %d networks, examples/networks.toml recommends %d", len(nets), len(rec.Models))
	}
	for _, m := range rec.Models {
		got, ok := nets[m.Name]
		if !ok {
			t.Errorf("bench/labels.toml does not run the recommended network %q", m.Name)
			continue
		}
		if !reflect.DeepEqual(*got.Network, *m.Network) {
			t.Errorf("bench/labels.toml's network %q differs from examples/networks.toml's:\n got %+v\nwant %+v", m.Name, *got.Network, *m.Network)
		}
	}
}
