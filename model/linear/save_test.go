package linear

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/model"
)

// TestSaveLoadPredictsTheSame: a saved and reloaded baseline predicts what
// the fitted one predicted (to rounding: a dual ridge is folded into
// primal weights on saving).
func TestSaveLoadPredictsTheSame(t *testing.T) {
	data := randomCohort(3, 60, 10, 2) // 90 edges of both views for 45 training participants: the dual path
	train := model.Dataset{Participants: data.Participants[:45], Y: subRows(data, 0, 45)}
	test := data.Participants[45:]
	// tol is the largest |loaded − fitted| / max(1, |fitted|): 0 where
	// the loaded model computes the same products in the same order.
	for name, tc := range map[string]struct {
		cfg Config
		tol float64
	}{
		"mean":                     {Config{Mean: &MeanConfig{}}, 0},
		"ridge dual":               {Config{Ridge: &RidgeConfig{Input: InputBoth}}, 1e-9},
		"ridge primal":             {Config{Ridge: &RidgeConfig{Input: InputStructural, Alphas: []float64{0.1, 1}}}, 1e-9}, // 45 edges: not more than participants
		"kernel ridge correlation": {Config{KernelRidge: &KernelRidgeConfig{Input: InputBoth}}, 1e-12},
		"kernel ridge linear":      {Config{KernelRidge: &KernelRidgeConfig{Input: InputFunctional, Kernel: KernelLinear}}, 1e-12},
		"cpm":                      {Config{CPM: &CPMConfig{Input: InputBoth, PThreshold: new(0.2)}}, 0},
	} {
		t.Run(name, func(t *testing.T) {
			cfg := tc.cfg
			cfg.SetDefaults()
			reg, err := cfg.New(2, 1)
			if err != nil {
				t.Fatal(err)
			}
			if err := reg.Fit(context.Background(), train, model.Dataset{}); err != nil {
				t.Fatal(err)
			}
			want, err := reg.Predict(test)
			if err != nil {
				t.Fatal(err)
			}
			dir := t.TempDir()
			if err := reg.(model.Saver).Save(dir); err != nil {
				t.Fatal(err)
			}
			loaded, err := Load(dir)
			if err != nil {
				t.Fatal(err)
			}
			if c, ok := reg.(*CPM); ok {
				if pos, neg := c.Selected(0); len(pos)+len(neg) == 0 {
					t.Fatal("CPM selected no edge: the check would be empty")
				}
			}
			got, err := loaded.Predict(test)
			if err != nil {
				t.Fatal(err)
			}
			r, c := want.Dims()
			for i := 0; i < r; i++ {
				for j := 0; j < c; j++ {
					if d := math.Abs(got.At(i, j) - want.At(i, j)); d > tc.tol*math.Max(1, math.Abs(want.At(i, j))) {
						t.Fatalf("prediction (%d, %d): %v after loading, %v before", i, j, got.At(i, j), want.At(i, j))
					}
				}
			}
		})
	}
}

func TestLoadErrors(t *testing.T) {
	tests := []struct{ manifest, want string }{
		{`{"format": "skein-linear", "version": 2, "kind": "mean", "means": [1]}`, "version 2"},
		{`{"format": "other", "version": 1}`, `format "other"`},
		{`{"format": "skein-linear", "version": 1, "kind": "lasso"}`, `kind "lasso"`},
		{`{"format": "skein-linear", "version": 1, "kind": "cpm"}`, "a cpm model needs input"},
		{`{"format": "skein-linear", "version": 1, "kind": "cpm", "input": "functional", "p": 3, "positive": [[3]], "negative": [[]], "coef": [[0, 1, 0]]}`, "edge 3 outside 0..2"},
		{`{"format": "skein-linear", "version": 1, "kind": "kernel_ridge", "input": "functional", "p": 4, "intercept": [0]}`, `kernel ""`},
		{`{"format": "skein-linear", "version": 1, "kind": "kernel_ridge", "kernel": "linear", "input": "functional", "p": 4, "intercept": [0]}`, "weights.npy"},
		{`{"format": "skein-linear", "version": 1, "kind": "mean"}`, "no means"},
		{`{"format": "skein-linear", "version": 1, "kind": "ridge", "input": "functional", "p": 4, "intercept": [0]}`, "weights.npy"},
		{`not json`, "manifest.json"},
	}
	for _, tt := range tests {
		dir := t.TempDir()
		os.WriteFile(filepath.Join(dir, "manifest.json"), []byte(tt.manifest), 0o644)
		if _, err := Load(dir); err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: error %v, want one containing %q", tt.manifest, err, tt.want)
		}
	}
}

// subRows returns rows [from, to) of d.Y.
func subRows(d model.Dataset, from, to int) *mat.Dense {
	return mat.DenseCopyOf(d.Y.Slice(from, to, 0, d.Y.RawMatrix().Cols))
}
