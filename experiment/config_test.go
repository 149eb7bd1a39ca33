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
