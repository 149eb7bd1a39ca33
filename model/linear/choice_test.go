package linear

import (
	"context"
	"encoding/json"
	"slices"
	"testing"

	"github.com/skein-neuro/skein/model"
)

// TestChoicesAtGridEdge fits ridge and kernel ridge on the cohorts of
// testdata/linear/grid_edges.json, made by make_grid_edges.py: on pure-noise
// scores scikit-learn's GridSearchCV chooses the largest penalty of the
// grid for every score, on exact linear scores the smallest (the script
// asserts both, on the fixture and on 40 other draws). Every choice must
// be that value and be reported at the grid's edge.
func TestChoicesAtGridEdge(t *testing.T) {
	var fixture struct {
		Cohorts []fixtureCohort `json:"cohorts"`
	}
	readJSON(t, "grid_edges.json", &fixture)
	edges := []struct {
		name string
		pick func([]float64) float64
	}{
		{"largest", slices.Max[[]float64]},
		{"smallest", slices.Min[[]float64]},
	}
	for ci, edge := range edges {
		c := fixture.Cohorts[ci]
		train := c.dataset(c.Train)
		_, targets := train.Y.Dims()
		grid := map[string][]float64{}
		for _, tc := range c.Cases {
			var set struct {
				Alphas []float64 `json:"alphas"`
			}
			readRaw(t, tc.Settings, &set)
			grid[tc.Model] = set.Alphas
		}
		for _, cfg := range []Config{
			{Ridge: &RidgeConfig{Alphas: grid["ridge"], AlphaScale: AlphaAbsolute}},
			{KernelRidge: &KernelRidgeConfig{Alphas: grid["kernel_ridge"], AlphaScale: AlphaAbsolute}},
		} {
			t.Run(edge.name+"/"+cfg.Kind(), func(t *testing.T) {
				cfg.SetDefaults()
				reg, err := cfg.New(targets, 1)
				if err != nil {
					t.Fatal(err)
				}
				tuned := reg.(model.Tuned)
				if got := tuned.Choices(); got != nil {
					t.Fatalf("before Fit: choices %v, want nil", got)
				}
				if err := reg.Fit(context.Background(), train, model.Dataset{}); err != nil {
					t.Fatal(err)
				}
				g := grid[cfg.Kind()]
				got := tuned.Choices()
				if len(got) != targets {
					t.Fatalf("choices for %d targets, want %d", len(got), targets)
				}
				for j, cs := range got {
					want := model.Choice{Setting: "alphas", Value: edge.pick(g), Min: slices.Min(g), Max: slices.Max(g)}
					if len(cs) != 1 || cs[0] != want || !cs[0].AtEdge() {
						t.Errorf("target %d: choices %+v, want [%+v] at the edge", j, cs, want)
					}
				}
			})
		}
	}
}

// TestChoicesOneValueGrid: a grid of one value chooses nothing; its
// Choice is recorded but never at the edge (common practice, no source:
// a fixed penalty is a setting, not a choice).
func TestChoicesOneValueGrid(t *testing.T) {
	d := randomCohort(3, 30, 6, 2)
	for _, cfg := range []Config{
		{Ridge: &RidgeConfig{Alphas: []float64{2}}},
		{KernelRidge: &KernelRidgeConfig{Alphas: []float64{2}}},
	} {
		t.Run(cfg.Kind(), func(t *testing.T) {
			cfg.SetDefaults()
			reg, err := cfg.New(2, 1)
			if err != nil {
				t.Fatal(err)
			}
			if err := reg.Fit(context.Background(), d, model.Dataset{}); err != nil {
				t.Fatal(err)
			}
			for j, cs := range reg.(model.Tuned).Choices() {
				want := []model.Choice{{Setting: "alphas", Value: 2, Min: 2, Max: 2}}
				if !slices.Equal(cs, want) || cs[0].AtEdge() {
					t.Errorf("target %d: choices %+v (at edge %v), want %+v not at the edge", j, cs, cs[0].AtEdge(), want)
				}
			}
		})
	}
}

// TestChoicesNotTuned: the baselines without a grid are not model.Tuned.
func TestChoicesNotTuned(t *testing.T) {
	for name, cfg := range map[string]Config{"mean": {Mean: &MeanConfig{}}, "cpm": {CPM: &CPMConfig{}}} {
		cfg.SetDefaults()
		reg, err := cfg.New(1, 1)
		if err != nil {
			t.Fatal(err)
		}
		if _, ok := reg.(model.Tuned); ok {
			t.Errorf("%s is a model.Tuned; it chooses nothing", name)
		}
	}
}

func readRaw(t *testing.T, raw []byte, v any) {
	t.Helper()
	if err := json.Unmarshal(raw, v); err != nil {
		t.Fatalf("fixture settings: %v", err)
	}
}
