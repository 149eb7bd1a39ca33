package experiment

import (
	"strings"
	"testing"

	"github.com/skein-neuro/skein/model/graphnet"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

func TestPermutationValidate(t *testing.T) {
	tests := []struct {
		p    Permutation
		want string // part of the error; "" for none
	}{
		{Permutation{}, ""},
		{Permutation{Blocks: "auto"}, ""},
		{Permutation{Blocks: "within"}, ""},
		{Permutation{Blocks: "whole"}, ""},
		{Permutation{Blocks: "families"}, `permutation.blocks: want "auto", "within" or "whole", found "families"`},
		{Permutation{Count: -1}, "permutation.count"},
		{Permutation{Count: MaxPermutations}, ""},
		{Permutation{Count: 1e12}, "permutation.count: at most 100000, found 1000000000000"},
		{Permutation{Count: 10, Chunk: new(1 << 40)}, "permutation.chunk: at most 100000"},
	}
	for _, tt := range tests {
		p := tt.p
		p.SetDefaults()
		if tt.p.Blocks == "" && p.Blocks != "auto" {
			t.Errorf("default blocks %q, want auto", p.Blocks)
		}
		err := p.Validate(nil)
		switch {
		case tt.want == "" && err != nil:
			t.Errorf("%+v: %v", tt.p, err)
		case tt.want != "" && (err == nil || !strings.Contains(err.Error(), tt.want)):
			t.Errorf("%+v: error %v, want one containing %q", tt.p, err, tt.want)
		}
	}
}

func TestSampleSizeAndDriftValidate(t *testing.T) {
	models := ridgeAndMean()
	cases := []struct {
		ss   SampleSize
		d    Drift
		want string
	}{
		{ss: SampleSize{Fractions: []float64{0.5, 0.25}}, want: "sample_size.fractions[1]"},
		{ss: SampleSize{Fractions: []float64{0, 1}}, want: "sample_size.fractions[0]"},
		{ss: SampleSize{Fractions: []float64{1.5}}, want: "sample_size.fractions[0]"},
		{ss: SampleSize{Models: []string{"nope"}}, want: "sample_size.models"},
		{d: Drift{Worsen: map[string]float64{"accuracy": 0.1}}, want: "drift.worsen"},
		{d: Drift{Worsen: map[string]float64{"mae": -1}}, want: "drift.worsen.mae"},
		{d: Drift{PLevel: 1.5}, want: "drift.p_level"},
		{d: Drift{PMetric: "auc"}, want: "drift.p_metric"},
		{d: Drift{Models: []string{"nope"}}, want: "drift.models"},
		{ss: SampleSize{Fractions: []float64{0.25, 1}}, d: Drift{Worsen: map[string]float64{"pearson_r": 0.1}, PLevel: 0.05}},
	}
	for _, tc := range cases {
		errSS, errD := tc.ss.Validate(models), tc.d.Validate(models)
		err := errSS
		if err == nil {
			err = errD
		}
		switch {
		case tc.want == "" && err != nil:
			t.Errorf("%+v %+v: %v", tc.ss, tc.d, err)
		case tc.want != "" && (err == nil || !strings.Contains(err.Error(), tc.want)):
			t.Errorf("%+v %+v: error %v, want one naming %s", tc.ss, tc.d, err, tc.want)
		}
	}
}

func ridgeAndMean() []train.ModelConfig {
	return []train.ModelConfig{
		{Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}},
		{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}},
	}
}

// TestDesignAsksForInnerLoss: a run records the baselines' inner-validation
// errors only when it must choose the reference baseline on them.
func TestDesignAsksForInnerLoss(t *testing.T) {
	net := train.ModelConfig{Name: "net", Network: &graphnet.Config{}}
	tests := []struct {
		name      string
		models    []train.ModelConfig
		reference string
		want      bool
	}{
		{"two baselines", ridgeAndMean(), "", true},
		{"reference named", ridgeAndMean(), "mean", false},
		{"one baseline and a network", []train.ModelConfig{ridgeAndMean()[1], net}, "", false},
	}
	for _, tt := range tests {
		exp := &Experiment{Models: tt.models, Comparison: Comparison{Reference: tt.reference}}
		exp.SetDefaults()
		if got := exp.Design().InnerLoss; got != tt.want {
			t.Errorf("%s: InnerLoss %v, want %v", tt.name, got, tt.want)
		}
	}
}

// TestMessagesSayNoGo: an experiment file's mistakes are told in words
// of the file (keys, lines, "a whole number"), never in Go's (struct
// fields, types, maps), and all of them at once.
func TestMessagesSayNoGo(t *testing.T) {
	const models = "[[model]]\nname = \"m\"\n[model.mean]\n"
	for _, tc := range []struct {
		name, file string
		want       []string
	}{
		{"text for a count", "[cv]\nfolds = \"5\"\n" + models,
			[]string{`line 2, column 9: key "cv.folds": want a whole number, found text`}},
		{"fraction for a count", "[cv]\nrepeats = 2.5\n" + models,
			[]string{`key "cv.repeats": want a whole number, found a number with a fraction or exponent`}},
		{"number for a list of words", "[cv]\nconfounds = 3\n" + models,
			[]string{`key "cv.confounds": want a list of text in quotes, found a whole number`}},
		{"table for a number", "seed = {a = 1}\n" + models,
			[]string{`key "seed": want a whole number, found a table`}},
		{"list of tables for a table", "[[cv]]\nfolds = 3\n" + models,
			[]string{`key "cv": want a table, found a list of tables ([[...]])`}},
		{"model key of the wrong type", "[[model]]\nname = \"n\"\n[model.network]\nepochs = \"ten\"\n",
			[]string{`key "model.network.epochs": want a whole number, found text`}},
		{"several problems at once", "[cv]\nfolds = 1\nrepeats = 0\n[permutation]\ncount = 1000000000000\n" +
			"[[model]]\nname = \"..\"\n[model.mean]\n[[model]]\nname = \"a/b\"\n[model.mean]\n",
			[]string{"cv.folds: need at least 2", "permutation.count: at most 100000", `name ".." cannot name a folder`, `name "a/b" holds a path separator`}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ParseExperiment([]byte(tc.file))
			if err == nil {
				t.Fatalf("no error, want %q", tc.want)
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q\nlacks %q", err, w)
				}
			}
			for _, goWord := range []string{"struct field", "of type", "map[", "train.", "graphnet."} {
				if strings.Contains(err.Error(), goWord) {
					t.Errorf("error %q shows Go's %q", err, goWord)
				}
			}
		})
	}
}

// TestVariantNamesSayNoGo: a swept table value names its variant as TOML
// writes it, not as a Go map.
func TestVariantNamesSayNoGo(t *testing.T) {
	for _, tc := range []struct {
		value any
		want  string
	}{
		{"adamw", "adamw"},
		{1e-3, "0.001"},
		{int64(32), "32"},
		{[]any{16.0, 8.0}, "[16, 8]"},
		{map[string]any{"pearson_r": 10.0, "kind": "e2n"}, `{kind = "e2n", pearson_r = 10}`},
		{[]any{map[string]any{"kind": "e2n", "channels": int64(8)}}, `[{channels = 8, kind = "e2n"}]`},
	} {
		if got := variantValue(tc.value); got != tc.want {
			t.Errorf("variantValue(%v) = %q, want %q", tc.value, got, tc.want)
		}
	}
}
