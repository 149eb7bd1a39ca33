package graphnet

import (
	"context"
	"runtime"
	"sync"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/internal/parallel"
)

// TestConcurrentNetworks trains networks in parallel goroutines, as the
// runner does with several jobs: each must give what it gives alone (run
// with -race to check for shared state).
func TestConcurrentNetworks(t *testing.T) {
	const p = 6
	ps, y := plantedCohort(24, p, 0.5, 2)
	cfg := testConfig("float32", BranchConfig{Layers: layers(e2e(2), LayerConfig{Kind: LayerDropout, Rate: 0.2}, e2n(2), n2g(3))})
	fit := func(seed int64) *mat.Dense {
		net, err := New(cfg, p, 1, seed)
		if err != nil {
			t.Error(err)
			return nil
		}
		if err := net.Fit(context.Background(), dataset(ps, y, 0, 18), dataset(ps, y, 18, 24)); err != nil {
			t.Error(err)
			return nil
		}
		pred, err := net.Predict(ps)
		if err != nil {
			t.Error(err)
		}
		return pred
	}
	alone := []*mat.Dense{fit(1), fit(2), fit(3)}
	together := make([]*mat.Dense, len(alone))
	var wg sync.WaitGroup
	for i := range together {
		wg.Add(1)
		go func() {
			defer wg.Done()
			together[i] = fit(int64(i + 1))
		}()
	}
	wg.Wait()
	for i := range alone {
		if !mat.Equal(alone[i], together[i]) {
			t.Errorf("seed %d: predictions differ when trained concurrently", i+1)
		}
	}
}

// TestHelpersDoNotChangeResults trains the same network with no pool
// helpers and with three: the ops and the optimizer cut their work in
// pieces fixed by the shapes, so predictions must be equal bit for bit.
// The sizes make products of several tiles and e2e → e2n node-major with
// the fused backward pass.
func TestHelpersDoNotChangeResults(t *testing.T) {
	const p = 70
	ps, y := plantedCohort(20, p, 0.5, 3)
	cfg := testConfig("float32", BranchConfig{Layers: layers(e2e(4), e2n(66), n2g(5))})
	fit := func(helpers int) *mat.Dense {
		net, err := New(cfg, p, 1, 7)
		if err != nil {
			t.Fatal(err)
		}
		net.pool.Close()
		net.pool = parallel.New(helpers)
		defer net.pool.Close()
		if err := net.Fit(context.Background(), dataset(ps, y, 0, 16), dataset(ps, y, 16, 20)); err != nil {
			t.Fatal(err)
		}
		pred, err := net.Predict(ps)
		if err != nil {
			t.Fatal(err)
		}
		return pred
	}
	alone, helped := fit(0), fit(3)
	if !mat.Equal(alone, helped) {
		t.Errorf("predictions differ with 3 pool helpers:\n%v\nalone:\n%v", mat.Formatted(helped.T()), mat.Formatted(alone.T()))
	}
}

// TestHelpersStop checks that a network's pool helpers stop once the
// network is unreachable: networks made and dropped one after another do
// not pile up goroutines.
func TestHelpersStop(t *testing.T) {
	cfg := testConfig("float32", BranchConfig{Layers: layers(e2e(2), e2n(2), n2g(3))})
	before := runtime.NumGoroutine()
	for seed := range 40 {
		net, err := New(cfg, 6, 1, int64(seed))
		if err != nil {
			t.Fatal(err)
		}
		_ = net
	}
	for range 20 {
		runtime.GC()
		if runtime.NumGoroutine() <= before+2 {
			return
		}
		time.Sleep(10 * time.Millisecond)
	}
	t.Errorf("%d goroutines after dropping 40 networks, %d before", runtime.NumGoroutine(), before)
}
