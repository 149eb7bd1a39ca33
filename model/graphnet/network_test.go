package graphnet

import (
	"context"
	"errors"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/model"
)

func TestTrainingLearnsPlantedSignal(t *testing.T) {
	// The cohort's ceiling is corr(z, y) = 1/sqrt(1 + 0.5²) ≈ 0.89 (see
	// plantedCohort); a network that finds the planted pattern should get
	// well above half of it on held-out participants. The bound 0.6 is
	// ours, chosen with room for the small sample (test r over 40
	// participants has a standard error of about 0.04 near 0.85).
	const p, nTrain, nValid, nTest = 8, 120, 40, 40
	ps, y := plantedCohort(nTrain+nValid+nTest, p, 0.5, 42)
	cfg := Config{
		Branches:  []BranchConfig{{Layers: layers(e2n(4), n2g(8))}},
		Head:      []int{8},
		DType:     "float64",
		Epochs:    new(60),
		BatchSize: new(16),
		Optimizer: OptimizerConfig{Rate: new(3e-3)},
	}
	cfg.SetDefaults()
	net, err := New(cfg, p, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	calls := 0
	net.OnEpoch(func(model.Epoch) { calls++ })
	train, valid := dataset(ps, y, 0, nTrain), dataset(ps, y, nTrain, nTrain+nValid)
	if err := net.Fit(context.Background(), train, valid); err != nil {
		t.Fatal(err)
	}
	h := net.History()
	if calls != len(h) || len(h) == 0 {
		t.Fatalf("OnEpoch called %d times for %d epochs", calls, len(h))
	}
	bestValid := math.Inf(1)
	for _, e := range h {
		bestValid = math.Min(bestValid, e.ValidLoss)
	}
	if !(bestValid < 0.7*h[0].ValidLoss) {
		t.Errorf("best validation loss %v, first epoch %v: want a drop of at least 30%%", bestValid, h[0].ValidLoss)
	}
	test := dataset(ps, y, nTrain+nValid, nTrain+nValid+nTest)
	pred, err := net.Predict(test.Participants)
	if err != nil {
		t.Fatal(err)
	}
	r := stat.Correlation(mat.Col(nil, 0, pred), mat.Col(nil, 0, test.Y), nil)
	t.Logf("test r = %.3f after %d epochs", r, len(h))
	if r < 0.6 {
		t.Errorf("test correlation %.3f, want at least 0.6 (ceiling 0.89)", r)
	}
	// The restored weights are those of the best validation epoch.
	set, _ := net.prepare(valid, "valid", true)
	l, _ := net.evalLoss(set)
	if math.Abs(l-bestValid) > 1e-12 {
		t.Errorf("validation loss after Fit %v, best epoch %v", l, bestValid)
	}
}

func TestSameSeedSameTrajectory(t *testing.T) {
	const p = 6
	ps, y := plantedCohort(30, p, 0.5, 5)
	for _, dtype := range []DType{Float64, Float32} {
		cfg := testConfig(dtype, BranchConfig{Layers: layers(e2e(2), LayerConfig{Kind: LayerDropout, Rate: 0.3}, e2n(3), n2g(4))})
		cfg.HeadDropout = 0.2
		cfg.Head = []int{4}
		fit := func(seed int64) (*Network, *mat.Dense) {
			net, err := New(cfg, p, 1, seed)
			if err != nil {
				t.Fatal(err)
			}
			if err := net.Fit(context.Background(), dataset(ps, y, 0, 22), dataset(ps, y, 22, 30)); err != nil {
				t.Fatal(err)
			}
			pred, err := net.Predict(ps)
			if err != nil {
				t.Fatal(err)
			}
			return net, pred
		}
		a, predA := fit(9)
		b, predB := fit(9)
		if !mat.Equal(predA, predB) {
			t.Errorf("%s: same seed, different predictions", dtype)
		}
		ha, hb := a.History(), b.History()
		for i := range ha {
			if ha[i] != hb[i] {
				t.Errorf("%s: same seed, epoch %d differs: %+v vs %+v", dtype, i+1, ha[i], hb[i])
			}
		}
		_, predC := fit(10)
		if mat.Equal(predA, predC) {
			t.Errorf("%s: different seeds, same predictions", dtype)
		}
		for i := 0; i < 30; i++ {
			if v := predA.At(i, 0); math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("%s: prediction %d is %v", dtype, i, v)
			}
		}
		if !(ha[len(ha)-1].TrainLoss < ha[0].TrainLoss) {
			t.Errorf("%s: training loss went from %v to %v", dtype, ha[0].TrainLoss, ha[len(ha)-1].TrainLoss)
		}
	}
}

func TestPartialBatchIsExact(t *testing.T) {
	// 13 participants in batches of 5: two full batches and one of 3. The
	// epoch loss must be the mean over all present scores, as one batch of
	// 13 gives it (common practice, no source).
	const p, n = 5, 13
	ps, y := plantedCohort(n, p, 0.5, 8)
	y.Set(4, 0, math.NaN())
	cfg := testConfig("float64", BranchConfig{Input: "propagated", Layers: layers(gconv(3), n2g(4))})
	cfg.BatchSize = new(5)
	cfg.Epochs = new(1)
	cfg.Optimizer = OptimizerConfig{Kind: SGD, Rate: new(1e-300), Momentum: new(0.0)}
	cfg.SetDefaults()
	net, err := New(cfg, p, 1, 3)
	if err != nil {
		t.Fatal(err)
	}
	d := dataset(ps, y, 0, n)
	set, _ := net.prepare(d, "test", true)
	batched, err := net.evalLoss(set)
	if err != nil {
		t.Fatal(err)
	}
	net.cfg.BatchSize = new(n)
	full, _ := net.evalLoss(set)
	pred, _ := net.Predict(ps)
	direct := net.loss.mean(mat.Col(nil, 0, pred), mat.Col(nil, 0, y))
	if math.Abs(batched-full) > 1e-12 || math.Abs(direct-full) > 1e-12 {
		t.Errorf("loss in batches of 5: %v, in one batch: %v, from predictions: %v", batched, full, direct)
	}
	net.cfg.BatchSize = new(5)
	if err := net.Fit(context.Background(), d, model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	if got := net.History()[0].TrainLoss; math.Abs(got-full) > 1e-12 {
		t.Errorf("epoch training loss %v, full-batch loss %v", got, full)
	}
}

func TestFitErrors(t *testing.T) {
	const p = 5
	ps, y := plantedCohort(10, p, 0.5, 8)
	cfg := testConfig("float64", BranchConfig{Layers: layers(e2n(2), n2g(3))})
	t.Run("diverged", func(t *testing.T) {
		c := cfg
		c.Optimizer = OptimizerConfig{Kind: SGD, Rate: new(1e6)}
		c.SetDefaults()
		net, _ := New(c, p, 1, 1)
		err := net.Fit(context.Background(), dataset(ps, y, 0, 10), model.Dataset{})
		if !errors.Is(err, model.ErrDiverged) {
			t.Fatalf("got %v, want model.ErrDiverged", err)
		}
	})
	t.Run("cancelled", func(t *testing.T) {
		net, _ := New(cfg, p, 1, 1)
		ctx, cancel := context.WithCancel(context.Background())
		cancel()
		if err := net.Fit(ctx, dataset(ps, y, 0, 10), model.Dataset{}); !errors.Is(err, context.Canceled) {
			t.Fatalf("got %v, want context.Canceled", err)
		}
	})
	t.Run("wrong size", func(t *testing.T) {
		net, _ := New(cfg, p+1, 1, 1)
		err := net.Fit(context.Background(), dataset(ps, y, 0, 10), model.Dataset{})
		if err == nil || !contains(err.Error(), `participant "sub-001"`, "5×5, want 6×6") {
			t.Fatalf("got %v", err)
		}
	})
	t.Run("missing modality", func(t *testing.T) {
		c := testConfig("float64", BranchConfig{Input: "structural", Layers: layers(e2n(2), n2g(3))})
		net, _ := New(c, p, 1, 1)
		d := dataset(ps, y, 0, 10)
		q := *d.Participants[3]
		q.Structural = nil
		d.Participants = append(d.Participants[:3:3], append(ps[:0:0], &q)...)
		d.Participants = append(d.Participants, ps[4:10]...)
		err := net.Fit(context.Background(), d, model.Dataset{})
		if err == nil || !contains(err.Error(), `participant "sub-004"`, "structural") {
			t.Fatalf("got %v", err)
		}
	})
}

func contains(s string, subs ...string) bool {
	for _, sub := range subs {
		if !strings.Contains(s, sub) {
			return false
		}
	}
	return true
}

func TestInputDropout(t *testing.T) {
	const p = 5
	ps, y := plantedCohort(12, p, 0.5, 6)
	cfg := testConfig("float32",
		BranchConfig{Layers: layers(LayerConfig{Kind: LayerDropout, Rate: 0.1}, e2e(2), n2g(3))},
		BranchConfig{Input: "propagated", Layers: layers(LayerConfig{Kind: LayerDropout, Rate: 0.1}, gconv(2), n2g(3))})
	net, err := New(cfg, p, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	if err := net.Fit(context.Background(), dataset(ps, y, 0, 12), model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	if h := net.History(); len(h) != *cfg.Epochs || !math.IsNaN(h[0].ValidLoss) || h[0].Best {
		t.Errorf("history without a validation set: %+v", h)
	}
}
