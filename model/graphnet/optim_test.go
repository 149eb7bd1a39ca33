package graphnet

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// optimFixture is testdata/graphnet/optim.json, written by
// testdata/graphnet/optim_fixture.py with PyTorch (torch.optim.AdamW,
// torch.optim.SGD, torch.nn.utils.clip_grad_norm_, lr_scheduler.StepLR and
// CosineAnnealingLR) from Debian's python3-torch.
type optimFixture struct {
	W0, C, T [][]float64
	Cases    []struct {
		Name, Kind         string
		Clip, LR, Momentum float64
		WeightDecay        float64 `json:"weight_decay"`
		Beta1, Beta2, Eps  float64
		Steps              [][][]float64
	}
	Schedules []struct {
		Name       string
		Rate       float64
		StepEpochs int     `json:"step_epochs"`
		Factor     float64 `json:"factor"`
		MinRate    float64 `json:"min_rate"`
		Epochs     int
		Rates      []float64
	}
}

func readOptimFixture(t *testing.T) optimFixture {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("..", "..", "testdata", "graphnet", "optim.json"))
	if err != nil {
		t.Fatal(err)
	}
	var f optimFixture
	if err := json.Unmarshal(raw, &f); err != nil {
		t.Fatal(err)
	}
	return f
}

func TestOptimizersAgainstTorch(t *testing.T) {
	fix := readOptimFixture(t)
	for _, tc := range fix.Cases {
		t.Run(tc.Name, func(t *testing.T) {
			cfg := OptimizerConfig{Kind: OptimizerKind(tc.Kind), WeightDecay: tc.WeightDecay, Beta1: new(tc.Beta1), Beta2: new(tc.Beta2), Epsilon: new(tc.Eps), Momentum: new(tc.Momentum), ClipNorm: tc.Clip}
			var ws, gs []any
			var w, g [][]float64
			for _, w0 := range fix.W0 {
				wi := append([]float64(nil), w0...)
				gi := make([]float64, len(w0))
				w, g = append(w, wi), append(g, gi)
				ws, gs = append(ws, wi), append(gs, gi)
			}
			opt := newOptimizer(cfg, ws, gs, nil)
			for s, want := range tc.Steps {
				for i := range w {
					for j := range w[i] {
						g[i][j] = 2 * fix.C[i][j] * (w[i][j] - fix.T[i][j])
					}
				}
				opt.step(tc.LR)
				for i := range w {
					for j := range w[i] {
						if d := math.Abs(w[i][j] - want[i][j]); d > 1e-12 {
							t.Fatalf("step %d: w[%d][%d] = %.15g, torch %.15g", s+1, i, j, w[i][j], want[i][j])
						}
					}
				}
			}
		})
	}
}

func TestScheduleAgainstTorch(t *testing.T) {
	fix := readOptimFixture(t)
	for _, sc := range fix.Schedules {
		cfg := OptimizerConfig{Schedule: Schedule(sc.Name), Rate: new(sc.Rate), StepEpochs: new(sc.StepEpochs), Factor: new(sc.Factor), MinRate: sc.MinRate}
		for e, want := range sc.Rates {
			if got := rateAt(cfg, e, sc.Epochs); math.Abs(got-want) > 1e-12 {
				t.Errorf("%s: epoch %d: rate %v, torch %v", sc.Name, e, got, want)
			}
		}
	}
}

func TestOptimizerFloat32(t *testing.T) {
	// Float32 follows the float64 trajectory to about float32 precision (common
	// practice, no source).
	cfg := OptimizerConfig{Kind: AdamW, Beta1: new(0.9), Beta2: new(0.999), Epsilon: new(1e-8), WeightDecay: 0.01, Momentum: new(0.0)}
	w64, g64 := []float64{1, -2, 3}, []float64{0, 0, 0}
	w32, g32 := []float32{1, -2, 3}, []float32{0, 0, 0}
	o64 := newOptimizer(cfg, []any{w64}, []any{g64}, nil)
	o32 := newOptimizer(cfg, []any{w32}, []any{g32}, nil)
	for range 20 {
		for j := range w64 {
			g64[j] = 2 * w64[j]
			g32[j] = 2 * w32[j]
		}
		o64.step(0.1)
		o32.step(0.1)
	}
	for j := range w64 {
		if math.Abs(float64(w32[j])-w64[j]) > 1e-4 {
			t.Errorf("w[%d]: float32 %v, float64 %v", j, w32[j], w64[j])
		}
	}
}
