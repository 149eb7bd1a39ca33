package graphnet

import (
	"context"
	"fmt"
	"testing"

	"github.com/skein-neuro/skein/model"
)

// BenchmarkEpoch times one training epoch of the reference network: a
// one-channel p × p input, e2e 32, e2n 64, n2g 128, head 64 → 32 → 1,
// leaky ReLU 0.2, loss mean|e| + mean e², AdamW at rate 1e-3, batches of
// 16, N = 275 invented participants, p = 116. Run it with -benchmem, and
// with -tags openblas (CGO_LDFLAGS=-lopenblas) for OpenBLAS and
// GOEXPERIMENT=simd for the vector loops of package internal/vec.
func BenchmarkEpoch(b *testing.B) {
	const n, p = 275, 116
	ps, y := plantedCohort(n, p, 0.5, 1)
	train := dataset(ps, y, 0, n)
	for _, dtype := range []DType{Float32, Float64} {
		b.Run(fmt.Sprintf("p=%d/%s", p, dtype), func(b *testing.B) {
			cfg := Config{
				Branches:  []BranchConfig{{Layers: layers(e2e(32), e2n(64), n2g(128))}},
				Head:      []int{64, 32},
				DType:     dtype,
				Epochs:    new(1),
				BatchSize: new(16),
			}
			cfg.SetDefaults()
			net, err := New(cfg, p, 1, 1)
			if err != nil {
				b.Fatal(err)
			}
			ctx := context.Background()
			// The first epoch builds the graphs.
			if err := net.Fit(ctx, train, model.Dataset{}); err != nil {
				b.Fatal(err)
			}
			b.ResetTimer()
			for b.Loop() {
				if err := net.Fit(ctx, train, model.Dataset{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkTrainStep times one training step (forward, backward, AdamW
// update) of the reference network on a batch of 16 at p = 116; -benchmem
// shows what a step allocates in steady state.
func BenchmarkTrainStep(b *testing.B) {
	const n, p = 16, 116
	ps, y := plantedCohort(n, p, 0.5, 1)
	cfg := Config{
		Branches:  []BranchConfig{{Layers: layers(e2e(32), e2n(64), n2g(128))}},
		Head:      []int{64, 32},
		DType:     "float32",
		BatchSize: new(n),
	}
	net, err := New(cfg, p, 1, 1)
	if err != nil {
		b.Fatal(err)
	}
	set, err := net.prepare(dataset(ps, y, 0, n), "benchmark", true)
	if err != nil {
		b.Fatal(err)
	}
	ws, gs := make([]any, len(net.params)), make([]any, len(net.params))
	for i, prm := range net.params {
		ws[i], gs[i] = prm.value.Data(), prm.grad.Data()
	}
	opt := newOptimizer(net.cfg.Optimizer, ws, gs, nil)
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	step := func() {
		if _, _, err := net.trainStep(set, idx); err != nil {
			b.Fatal(err)
		}
		opt.step(1e-3)
	}
	step() // builds the graph and its buffers
	b.ResetTimer()
	for b.Loop() {
		step()
	}
}
