package experiment

import (
	"go/build"
	"strings"
	"testing"
)

// TestLayers: the packages import only downwards, data → model → train →
// eval → experiment → cmd, as their doc comments say (common practice, no
// source: the layering is this project's design).
func TestLayers(t *testing.T) {
	const module = "github.com/skein-neuro/skein/"
	forbidden := map[string][]string{
		"data":              {"model", "train", "eval", "experiment"},
		"model":             {"train", "eval", "experiment"},
		"model/linear":      {"train", "eval", "experiment"},
		"model/graphnet":    {"train", "eval", "experiment"},
		"train":             {"eval", "experiment"},
		"eval":              {"train", "experiment"},
		"experiment":        {"experiment/report", "cmd/skein"},
		"experiment/report": {"cmd/skein"},
	}
	for pkg, banned := range forbidden {
		deps := make(map[string]bool)
		var walk func(path string)
		walk = func(path string) {
			p, err := build.Import(path, "", 0)
			if err != nil {
				t.Fatalf("%s: %v", path, err)
			}
			for _, imp := range p.Imports {
				if strings.HasPrefix(imp, module) && !deps[imp] {
					deps[imp] = true
					walk(imp)
				}
			}
		}
		walk(module + pkg)
		for dep := range deps {
			name := strings.TrimPrefix(dep, module)
			for _, b := range banned {
				if name == b || strings.HasPrefix(name, b+"/") {
					t.Errorf("%s imports %s (through its dependencies): %s must not import %s", pkg, name, pkg, b)
				}
			}
		}
	}
}
