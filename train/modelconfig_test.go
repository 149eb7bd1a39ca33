package train

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/graphnet"
	"github.com/skein-neuro/skein/model/linear"
)

// TestKindTablesAreRegistered: the kind tables of ModelConfig and the
// registered kinds are the same set of names, so that every table builds
// and every kind can be configured.
func TestKindTablesAreRegistered(t *testing.T) {
	var tables, kinds []string
	for _, tb := range (ModelConfig{}).tables() {
		tables = append(tables, tb.key)
	}
	for _, k := range model.Kinds() {
		kinds = append(kinds, k.Name)
	}
	slices.Sort(tables)
	if !slices.Equal(tables, kinds) {
		t.Errorf("ModelConfig has kind tables %v, the registry kinds %v", tables, kinds)
	}
}

func TestModelConfigKind(t *testing.T) {
	tests := []struct {
		cfg  ModelConfig
		want string
	}{
		{ModelConfig{Network: &graphnet.Config{}}, "network"},
		{ModelConfig{Config: linear.Config{Mean: &linear.MeanConfig{}}}, "mean"},
		{ModelConfig{Config: linear.Config{Ridge: &linear.RidgeConfig{}}}, "ridge"},
		{ModelConfig{Config: linear.Config{KernelRidge: &linear.KernelRidgeConfig{}}}, "kernel_ridge"},
		{ModelConfig{Config: linear.Config{CPM: &linear.CPMConfig{}}}, "cpm"},
		{ModelConfig{Config: linear.Config{Majority: &linear.MajorityConfig{}}}, "majority"},
		{ModelConfig{Config: linear.Config{Logistic: &linear.LogisticConfig{}}}, "logistic"},
		{ModelConfig{Config: linear.Config{KernelLogistic: &linear.KernelLogisticConfig{}}}, "kernel_logistic"},
	}
	for _, tt := range tests {
		if got := tt.cfg.Kind(); got != tt.want {
			t.Errorf("Kind() = %q, want %q", got, tt.want)
		}
		k, err := tt.cfg.Spec()
		if err != nil || k.Name != tt.want {
			t.Errorf("%s: Spec() = %q, %v", tt.want, k.Name, err)
		}
		if s := tt.cfg.Settings(); s == nil {
			t.Errorf("%s: Settings() = nil", tt.want)
		}
	}
}

func TestModelConfigSpecErrors(t *testing.T) {
	tests := []struct {
		name string
		cfg  ModelConfig
		want string
	}{
		{"none", ModelConfig{}, "no kind table is set; add one of [model.network], [model.mean], [model.ridge], [model.kernel_ridge], [model.cpm], [model.majority], [model.logistic] or [model.kernel_logistic]"},
		{"two", ModelConfig{Network: &graphnet.Config{}, Config: linear.Config{Ridge: &linear.RidgeConfig{}}},
			"tables model.network and model.ridge are both set; choose one"},
		{"three", ModelConfig{Config: linear.Config{Mean: &linear.MeanConfig{}, Ridge: &linear.RidgeConfig{}, CPM: &linear.CPMConfig{}}},
			"tables model.mean and model.ridge and model.cpm are all set; choose one"},
	}
	for _, tt := range tests {
		if _, err := tt.cfg.Spec(); err == nil || err.Error() != tt.want {
			t.Errorf("%s: Spec() error %v, want %q", tt.name, err, tt.want)
		}
		if err := tt.cfg.Validate(); err == nil || err.Error() != tt.want {
			t.Errorf("%s: Validate() error %v, want %q", tt.name, err, tt.want)
		}
		if _, err := buildModel(tt.cfg, 4, 1, 1); err == nil || err.Error() != tt.want {
			t.Errorf("%s: buildModel error %v, want %q", tt.name, err, tt.want)
		}
	}
}

// TestModelConfigValidateSettings: Validate passes on the kind's own
// error, naming its key, and SetDefaults fills the kind's defaults.
func TestModelConfigValidateSettings(t *testing.T) {
	cfg := ModelConfig{Name: "r", Config: linear.Config{Ridge: &linear.RidgeConfig{Input: "both", InnerFolds: new(1)}}}
	cfg.SetDefaults()
	if cfg.Ridge.Standardize != linear.StandardizeZScore {
		t.Errorf("SetDefaults: standardize %q, want %q", cfg.Ridge.Standardize, linear.StandardizeZScore)
	}
	if err := cfg.Validate(); err == nil || !strings.Contains(err.Error(), "model.ridge.inner_folds") {
		t.Errorf("Validate: error %v, want one naming model.ridge.inner_folds", err)
	}
}

// TestLoadModelUnknownKind: a fitted.json of a kind no package registered
// is refused with an error naming the file and the kind.
func TestLoadModelUnknownKind(t *testing.T) {
	dir := t.TempDir()
	f := Fitted{Format: "skein-fitted", Version: FittedVersion, Kind: "lasso", Targets: []string{"a"},
		Prep: &Pipeline{Steps: []Prep{&TargetPrep{Mean: []float64{0}, SD: []float64{1}}}}}
	if err := writeFitted(dir, f); err != nil {
		t.Fatal(err)
	}
	_, err := LoadModel(dir)
	if !errors.Is(err, model.ErrUnknownKind) || !strings.Contains(err.Error(), FittedFile) || !strings.Contains(err.Error(), `"lasso"`) {
		t.Errorf("LoadModel: error %v, want ErrUnknownKind naming %s and \"lasso\"", err, FittedFile)
	}
	f.Kind = "cpm"
	if err := writeFitted(dir, f); err != nil {
		t.Fatal(err)
	}
	if _, err := LoadModel(dir); err == nil || !strings.Contains(err.Error(), "manifest.json") {
		t.Errorf("LoadModel of kind cpm without its files: error %v, want one naming manifest.json", err)
	}
}

// TestLoadModelFolderAdvice: LoadModel pointed at the folder above fold
// models, at a run's models folder or at an ensemble member says what to
// pass instead.
func TestLoadModelFolderAdvice(t *testing.T) {
	root := t.TempDir()
	fitted := func(parts ...string) {
		dir := filepath.Join(append([]string{root}, parts...)...)
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, FittedFile), []byte("{}"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	for r := 1; r <= 2; r++ {
		for f := 1; f <= 10; f++ {
			fitted("models", "net", fmt.Sprintf("r%d-f%d", r, f))
		}
	}
	fitted("models", "ridge", "r1-f1")
	fitted("models", "ridge", "all")
	if err := os.MkdirAll(filepath.Join(root, "models", "net", "r1-f1", "member-1"), 0o755); err != nil {
		t.Fatal(err)
	}
	models := filepath.Join(root, "models")
	for _, tt := range []struct {
		dir  string
		want []string
	}{
		{filepath.Join(models, "net"), []string{"not a saved model's folder (no fitted.json)",
			"the fold models r1-f1, r1-f2, r1-f3, ... r2-f9, r2-f10 (20 in all)", "such as " + filepath.Join(models, "net", "r1-f1"),
			"[output] refit = true"}},
		{filepath.Join(models, "ridge"), []string{"the fold models r1-f1 (", filepath.Join(models, "ridge", "all") + ", the model refitted on all participants"}},
		{models, []string{"a run's models folder, holding the saved models net, ridge"}},
		{filepath.Join(models, "net", "r1-f1", "member-1"), []string{"a member of the ensemble saved in " + filepath.Join(models, "net", "r1-f1")}},
	} {
		_, err := LoadModel(tt.dir)
		if !errors.Is(err, ErrNotModelFolder) {
			t.Errorf("%s: error %v, want ErrNotModelFolder", tt.dir, err)
			continue
		}
		for _, want := range tt.want {
			if !strings.Contains(err.Error(), want) {
				t.Errorf("%s: error %q lacks %q", tt.dir, err, want)
			}
		}
	}
	if _, err := LoadModel(root); err == nil || errors.Is(err, ErrNotModelFolder) || !strings.Contains(err.Error(), FittedFile) {
		t.Errorf("a folder holding no model: error %v, want the plain missing %s", err, FittedFile)
	}
}

func writeFitted(dir string, f Fitted) error {
	raw, err := json.Marshal(f)
	if err != nil {
		return err
	}
	return os.WriteFile(filepath.Join(dir, FittedFile), raw, 0o644)
}

// TestModelConfigInputs: which connectomes each kind learns from, as its
// settings say; a graph operator is built from the structural matrix, so
// a branch that needs one reads structure (definitions of the kinds'
// documentation, no outside source).
func TestModelConfigInputs(t *testing.T) {
	branch := func(in graphnet.Input, layer graphnet.LayerKind) graphnet.BranchConfig {
		return graphnet.BranchConfig{Input: in, Layers: []graphnet.LayerConfig{{Kind: layer}}}
	}
	net := func(b ...graphnet.BranchConfig) ModelConfig {
		return ModelConfig{Network: &graphnet.Config{Branches: b}}
	}
	tests := []struct {
		name                   string
		cfg                    ModelConfig
		functional, structural bool
	}{
		{"mean", ModelConfig{Config: linear.Config{Mean: &linear.MeanConfig{}}}, false, false},
		{"ridge default", ModelConfig{Config: linear.Config{Ridge: &linear.RidgeConfig{}}}, true, false},
		{"ridge structural", ModelConfig{Config: linear.Config{Ridge: &linear.RidgeConfig{Input: linear.InputStructural}}}, false, true},
		{"ridge both", ModelConfig{Config: linear.Config{Ridge: &linear.RidgeConfig{Input: linear.InputBoth}}}, true, true},
		{"kernel ridge both", ModelConfig{Config: linear.Config{KernelRidge: &linear.KernelRidgeConfig{Input: linear.InputBoth}}}, true, true},
		{"cpm functional", ModelConfig{Config: linear.Config{CPM: &linear.CPMConfig{Input: linear.InputFunctional}}}, true, false},
		{"network functional", net(branch(graphnet.InputFunctional, graphnet.LayerE2N)), true, false},
		{"network two branches", net(branch(graphnet.InputFunctional, graphnet.LayerE2N), branch(graphnet.InputStructural, graphnet.LayerE2N)), true, true},
		{"network propagated", net(branch(graphnet.InputPropagated, graphnet.LayerE2N)), true, true},
		{"network graph_conv", net(branch(graphnet.InputFunctional, graphnet.LayerGraphConv)), true, true},
		{"network views", net(graphnet.BranchConfig{Views: []graphnet.Input{graphnet.InputFunctional, graphnet.InputStructural}}), true, true},
		{"no table", ModelConfig{}, false, false},
	}
	for _, tt := range tests {
		f, s := tt.cfg.Inputs()
		if f != tt.functional || s != tt.structural {
			t.Errorf("%s: Inputs() = %v, %v, want %v, %v", tt.name, f, s, tt.functional, tt.structural)
		}
	}
}

// TestBuildModelRefusesLabelKinds: a kind that learns class labels only
// builds no regressor; the error names the model and the kind.
func TestBuildModelRefusesLabelKinds(t *testing.T) {
	cfg := ModelConfig{Name: "dx", Config: linear.Config{Logistic: &linear.LogisticConfig{}}}
	cfg.SetDefaults()
	want := `model "dx": kind logistic learns class labels, not scores`
	if _, err := buildModel(cfg, 4, 1, 1); err == nil || err.Error() != want {
		t.Errorf("buildModel error %v, want %q", err, want)
	}
}
