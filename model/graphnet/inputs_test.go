package graphnet

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/graphnet/internal/ops"
)

// TestInputDropoutKey checks a branch's input_dropout on a network that is
// linear in its input (one n2g layer without activation, random output
// weights): inverted dropout zeroes each input entry with probability
// rate and divides the others by 1 − rate, so the training forward pass
// averaged over many masks converges to the prediction without dropout
// (Srivastava et al. 2014, from memory; for a linear map this is
// linearity of expectation), a single pass differs from it, and Predict
// applies no dropout (the same prediction every call).
func TestInputDropoutKey(t *testing.T) {
	const p, batch, draws = 6, 4, 4000
	cfg := Config{
		Branches: []BranchConfig{{InputDropout: 0.5, Layers: layers(LayerConfig{Kind: LayerN2G, Size: 1, Activation: ActivationNone})}},
		DType:    Float64, BatchSize: new(batch), OutputInit: OutputRandom,
	}
	net, err := New(cfg, p, 1, 3)
	if err != nil {
		t.Fatal(err)
	}
	ps, y := plantedCohort(batch, p, 0.5, 9)
	set, err := net.prepare(dataset(ps, y, 0, batch), "test", true)
	if err != nil {
		t.Fatal(err)
	}
	idx := []int{0, 1, 2, 3}
	eval, err := net.build(batch, false, false)
	if err != nil {
		t.Fatal(err)
	}
	set.fill(eval, idx)
	if err := eval.m.run(); err != nil {
		t.Fatal(err)
	}
	want := make([]float64, batch)
	for k := range want {
		want[k] = valueAt(eval.m.dense(eval.pred), k)
	}
	for _, again := range []bool{false, true} {
		pred, err := net.Predict(ps)
		if err != nil {
			t.Fatal(err)
		}
		if got := mat.Col(nil, 0, pred); !equalFloats(got, want) {
			t.Fatalf("Predict (call again = %v) = %v, want the prediction without dropout %v", again, got, want)
		}
	}

	tr, err := net.build(batch, true, false)
	if err != nil {
		t.Fatal(err)
	}
	if len(tr.masks) != 1 || tr.rates[0] != 0.5 {
		t.Fatalf("training graph has masks at rates %v, want one at 0.5", tr.rates)
	}
	set.fill(tr, idx)
	sum, sq := make([]float64, batch), make([]float64, batch)
	differs := false
	for range draws {
		if err := ops.FillMask(tr.masks[0], tr.rates[0], net.rng); err != nil {
			t.Fatal(err)
		}
		if err := tr.m.run(); err != nil {
			t.Fatal(err)
		}
		for k := range batch {
			v := valueAt(tr.m.dense(tr.pred), k)
			sum[k] += v
			sq[k] += v * v
			differs = differs || v != want[k]
		}
	}
	if !differs {
		t.Error("every training pass gave the prediction without dropout: the input was not dropped")
	}
	for k := range batch {
		mean := sum[k] / draws
		sd := math.Sqrt(sq[k]/draws - mean*mean)
		// Five standard errors of the mean of the draws.
		if tol := 5 * sd / math.Sqrt(draws); math.Abs(mean-want[k]) > tol {
			t.Errorf("participant %d: mean training prediction %v over %d masks, want %v ± %v", k, mean, draws, want[k], tol)
		}
	}
}

// TestOutputInit checks output_init: with "zero" (the default) the
// untrained network predicts exactly 0, the mean of the standardized
// training scores, for every participant; with "random" it does not
// (common practice, no source).
func TestOutputInit(t *testing.T) {
	const p = 6
	ps, _ := plantedCohort(5, p, 0.5, 2)
	for _, init := range []OutputInit{"", OutputZero, OutputRandom} {
		cfg := Config{Branches: []BranchConfig{{Layers: layers(e2n(3), n2g(4))}}, Head: []int{4}, OutputInit: init}
		net, err := New(cfg, p, 2, 1)
		if err != nil {
			t.Fatal(err)
		}
		pred, err := net.Predict(ps)
		if err != nil {
			t.Fatal(err)
		}
		zero := mat.Norm(pred, 1) == 0
		if zero != (init != OutputRandom) {
			t.Errorf("output_init %q: untrained predictions %v, want all 0: %v", init, mat.Formatted(pred.T()), init != OutputRandom)
		}
	}
}

func equalFloats(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// TestEdgeImportanceFrom: for a network linear in its input (one n2g
// layer without activation), the gradient does not depend on the input,
// so gradient × (input − reference) is the importance of the inputs minus
// that of the references (linearity; no source needed), and a nil
// reference gives EdgeImportance.
func TestEdgeImportanceFrom(t *testing.T) {
	const p = 5
	cfg := Config{
		Branches: []BranchConfig{{Layers: layers(LayerConfig{Kind: LayerN2G, Size: 2, Activation: ActivationNone})}},
		DType:    Float64, OutputInit: OutputRandom,
	}
	net, err := New(cfg, p, 2, 4)
	if err != nil {
		t.Fatal(err)
	}
	ps, _ := plantedCohort(6, p, 0.5, 3)
	ref, _ := plantedCohort(6, p, 0.5, 8)
	from, err := net.EdgeImportanceFrom(ps, ref)
	if err != nil {
		t.Fatal(err)
	}
	of, err := net.EdgeImportance(ps)
	if err != nil {
		t.Fatal(err)
	}
	ofRef, err := net.EdgeImportance(ref)
	if err != nil {
		t.Fatal(err)
	}
	nilRef, err := net.EdgeImportanceFrom(ps, nil)
	if err != nil {
		t.Fatal(err)
	}
	for tg := range from {
		var diff mat.Dense
		diff.Sub(of[tg], ofRef[tg])
		if !mat.EqualApprox(from[tg], &diff, 1e-12) {
			t.Errorf("target %d: EdgeImportanceFrom\n%v\nwant EdgeImportance(ps) − EdgeImportance(ref)\n%v", tg, mat.Formatted(from[tg]), mat.Formatted(&diff))
		}
		if !mat.Equal(nilRef[tg], of[tg]) {
			t.Errorf("target %d: EdgeImportanceFrom(ps, nil) differs from EdgeImportance(ps)", tg)
		}
	}
	if _, err := net.EdgeImportanceFrom(ps, ref[:2]); err == nil {
		t.Error("2 references for 6 participants: no error")
	}
}

// TestBatchSizeBeyondTheData: a batch_size far beyond the participants
// (1e9) trains and explains in one batch, as batch_size = n does, with no
// allocation sized by the setting (it would take 8 GB here).
func TestBatchSizeBeyondTheData(t *testing.T) {
	const p = 5
	ps, y := plantedCohort(12, p, 0.5, 3)
	for _, tc := range []struct {
		name  string
		batch int
	}{{"batch = n", 12}, {"batch = 1e9", 1_000_000_000}} {
		t.Run(tc.name, func(t *testing.T) {
			cfg := Config{
				Branches: []BranchConfig{{Layers: layers(LayerConfig{Kind: LayerN2G, Size: 2, Activation: ActivationNone})}},
				DType:    Float64, OutputInit: OutputRandom, BatchSize: new(tc.batch), Epochs: new(2),
			}
			net, err := New(cfg, p, 1, 4)
			if err != nil {
				t.Fatal(err)
			}
			if err := net.Fit(context.Background(), model.Dataset{Participants: ps, Y: y}, model.Dataset{}); err != nil {
				t.Fatal(err)
			}
			if _, err := net.EdgeImportance(ps); err != nil {
				t.Fatal(err)
			}
		})
	}
}
