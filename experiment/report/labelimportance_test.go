package report

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/experiment"
)

// TestReportOfLabelImportance adds classifier maps to the checkpoints of
// the tiny run's ridge model (binary "diagnosis": one map, of the
// log-odds of patient; "subtype" of three classes: one map per class)
// and checks that importance.csv lists them with the label as target and
// the class in the class column, the fold means computed by hand, that
// the scores' lines keep an empty class, and that each map has a figure
// whose caption says what it explains.
func TestReportOfLabelImportance(t *testing.T) {
	dir, _ := classRun(t)
	units, err := filepath.Glob(filepath.Join(dir, experiment.UnitsDir, "ridge", "*.json"))
	if err != nil || len(units) == 0 {
		t.Fatalf("ridge checkpoints: %v, %v", units, err)
	}
	r, err := ReadRun(dir)
	if err != nil {
		t.Fatal(err)
	}
	p := r.P()
	for f, path := range units {
		raw, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		var u map[string]any
		if err := json.Unmarshal(raw, &u); err != nil {
			t.Fatal(err)
		}
		// Edge (0, 1) of unit f is f + 1 in the diagnosis map and
		// −(c + 1)·(f + 1) in class c's subtype map; every other edge 0.
		mapOf := func(v float64) []float64 {
			m := make([]float64, p*p)
			m[0*p+1], m[1*p+0] = v, v
			return m
		}
		maps := []any{map[string]any{"label": "diagnosis", "class": 1, "view": 0, "map": mapOf(float64(f + 1))}}
		for c := range 3 {
			maps = append(maps, map[string]any{"label": "subtype", "class": c, "view": 0, "map": mapOf(-float64((c + 1) * (f + 1)))})
		}
		u["label_importance"] = maps
		if raw, err = json.Marshal(u); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, raw, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	figs, err := Build(dir)
	if err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(filepath.Join(dir, experiment.ImportanceFile))
	if err != nil {
		t.Fatal(err)
	}
	text := string(raw)
	if !strings.HasPrefix(text, "model,target,view,region_i,region_j,mean,sd,folds,same_sign,class\n") {
		t.Errorf("importance.csv header: %q", strings.SplitN(text, "\n", 2)[0])
	}
	regions := r.Regions
	n := float64(len(units))
	mean := (n + 1) / 2 // mean of 1 … n
	want := []string{
		fmt.Sprintf("\nridge,diagnosis,functional,%s,%s,%g,", regions[0], regions[1], mean),
		fmt.Sprintf("\nridge,subtype,functional,%s,%s,%g,", regions[0], regions[1], -mean),
		fmt.Sprintf("\nridge,subtype,functional,%s,%s,%g,", regions[0], regions[1], -3*mean),
	}
	for _, w := range want {
		if !strings.Contains(text, w) {
			t.Errorf("importance.csv lacks a line starting %q", w)
		}
	}
	for _, line := range strings.Split(strings.TrimSpace(text), "\n")[1:] {
		fields := strings.Split(line, ",")
		class := fields[len(fields)-1]
		switch fields[1] {
		case "diagnosis":
			if class != "patient" {
				t.Errorf("diagnosis line of class %q, want patient: %s", class, line)
			}
		case "subtype":
			if !slices.Contains([]string{"a", "b", "c"}, class) {
				t.Errorf("subtype line of class %q: %s", class, line)
			}
		default:
			if class != "" {
				t.Errorf("a score's line has class %q: %s", class, line)
			}
		}
	}
	captions := map[string]string{
		"importance-ridge-diagnosis-patient.png": "log-odds of patient against control for diagnosis",
		"importance-ridge-subtype-a.png":         "centred logit of a",
		"importance-ridge-subtype-c.png":         "centred logit of c",
	}
	for name, phrase := range captions {
		i := slices.IndexFunc(figs, func(f Figure) bool { return f.File == name })
		if i < 0 {
			t.Errorf("no figure %s; drew %v", name, names(figs))
			continue
		}
		if !strings.Contains(figs[i].Caption, phrase) || figs[i].Section != SectionImportance {
			t.Errorf("%s: section %q, caption %q, want it to say %q", name, figs[i].Section, figs[i].Caption, phrase)
		}
	}
	html, err := os.ReadFile(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(html), "ridge — diagnosis (patient) — functional edges</h3>") {
		t.Error("report.html has no section for ridge's diagnosis map")
	}
}
