package linear

import (
	"bytes"
	"slices"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"
)

func decodeConfig(t *testing.T, text string) Config {
	t.Helper()
	var file struct {
		Model Config `toml:"model"`
	}
	dec := toml.NewDecoder(bytes.NewReader([]byte(text)))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&file); err != nil {
		t.Fatalf("decode %q: %v", text, err)
	}
	file.Model.SetDefaults()
	return file.Model
}

func TestConfigDefaults(t *testing.T) {
	if c := decodeConfig(t, "[model.mean]\n"); c.Kind() != "mean" || c.Validate() != nil {
		t.Errorf("[model.mean]: kind %q, validate %v", c.Kind(), c.Validate())
	}
	c := decodeConfig(t, "[model.ridge]\n")
	want := RidgeConfig{Input: "functional", Standardize: "zscore", Alphas: DefaultAlphas(), AlphaScale: "relative", InnerFolds: new(5)}
	if got := *c.Ridge; got.Input != want.Input || got.Standardize != want.Standardize || !slices.Equal(got.Alphas, want.Alphas) || got.AlphaScale != want.AlphaScale || *got.InnerFolds != *want.InnerFolds {
		t.Errorf("ridge defaults %+v, want %+v", got, want)
	}
	if c.Ridge.Inner != InnerKFold {
		t.Errorf("ridge inner defaults to %q, want %q", c.Ridge.Inner, InnerKFold)
	}
	if l := decodeConfig(t, "[model.ridge]\ninner = \"loo\"\n"); l.Ridge.Inner != InnerLOO || l.Validate() != nil {
		t.Errorf("inner = \"loo\": %q, validate %v", l.Ridge.Inner, l.Validate())
	}
	if a := DefaultAlphas(); a[0] != 1e-3 || a[6] != 1 || a[12] != 1e3 {
		t.Errorf("DefaultAlphas() = %v", a)
	}
	k := decodeConfig(t, "[model.kernel_ridge]\nkernel = \"linear\"\n")
	if k.Kind() != "kernel_ridge" || k.KernelRidge.Kernel != "linear" || *k.KernelRidge.InnerFolds != 5 || k.Validate() != nil {
		t.Errorf("kernel_ridge: %+v", *k.KernelRidge)
	}
	p := decodeConfig(t, "[model.cpm]\n")
	if cpm := *p.CPM; cpm.Input != "functional" || cpm.Correlation != "pearson" || *cpm.PThreshold != 0.01 || cpm.Network != "both" {
		t.Errorf("cpm defaults %+v", *p.CPM)
	}
	if (Config{}).Kind() != "" {
		t.Error("empty Config has a kind")
	}
}

func TestConfigValidate(t *testing.T) {
	tests := []struct{ text, want string }{
		{"[model.ridge]\nalphas = [1, -1]\n", "model.ridge.alphas: must be positive or zero, found -1"},
		{"[model.ridge]\ninput = \"fmri\"\n", `model.ridge.input: want "functional", "structural" or "both", found "fmri"`},
		{"[model.ridge]\nstandardize = \"robust\"\n", `model.ridge.standardize: want "zscore" or "center", found "robust"`},
		{"[model.ridge]\ninner_folds = 1\n", "model.ridge.inner_folds: must be at least 2, found 1"},
		{"[model.ridge]\ninner = \"gcv\"\n", `model.ridge.inner: want "kfold" or "loo", found "gcv"`},
		{"[model.ridge]\ninner = \"loo\"\nalphas = [0, 1]\n", `model.ridge.alphas: must be positive with inner = "loo", found 0`},
		{"[model.ridge]\nalpha_scale = \"absolute\"\n", `model.ridge.alphas: at least one penalty is required with alpha_scale = "absolute"`},
		{"[model.ridge]\nalpha_scale = \"trace\"\n", `model.ridge.alpha_scale: want "relative" or "absolute", found "trace"`},
		{"[model.kernel_ridge]\nkernel = \"rbf\"\n", `model.kernel_ridge.kernel: want "correlation" or "linear", found "rbf"`},
		{"[model.kernel_ridge]\nalphas = []\n", "model.kernel_ridge.alphas: at least one penalty is required"},
		{"[model.cpm]\np_threshold = 2\n", "model.cpm.p_threshold: must be in (0, 1], found 2"},
		{"[model.cpm]\nnetwork = \"all\"\n", `model.cpm.network: want "positive", "negative" or "both", found "all"`},
		{"[model.cpm]\ncorrelation = \"kendall\"\n", `model.cpm.correlation: want "pearson" or "spearman", found "kendall"`},
		{"[model.mean]\n[model.cpm]\n", "model: tables model.mean and model.cpm are all set; choose one"},
		{"", "model: no baseline table"},
	}
	for _, tt := range tests {
		err := decodeConfig(t, tt.text).Validate()
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%q: error %v, want one containing %q", tt.text, err, tt.want)
		}
	}
	if _, err := (Config{Mean: &MeanConfig{}}).New(0, 1); err == nil {
		t.Error("New with 0 targets: no error")
	}
}
