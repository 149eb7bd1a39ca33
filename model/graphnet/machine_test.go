package graphnet

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"

	"github.com/skein-neuro/skein/model/graphnet/internal/ops"
)

// machineConfigs are architectures that, between them, put every op a
// configuration can build into a graph: e2e (fused and unfused with its
// rectifier), e2n, graph_conv on the one-channel input (a reshape) and on
// e2n features (a transpose), n2g on edge, node and graph-conv features,
// dropout in a branch and in the head, both merges, the head and the
// masked loss. Their sizes are small (a batch of 4 at p = 8); the ops
// compute every tile of a product on the calling goroutine in either build
// (internal/gemm's Serial, or single-threaded OpenBLAS).
func machineConfigs() map[string]Config {
	drop := LayerConfig{Kind: LayerDropout, Rate: 0.25}
	linear := func(l LayerConfig) LayerConfig { l.Activation = ActivationNone; return l }
	return map[string]Config{
		"one branch": {
			Branches: []BranchConfig{{Layers: layers(e2e(2), drop, e2n(4), n2g(5))}},
			Head:     []int{4}, HeadDropout: 0.3,
		},
		"concat": {
			Branches: []BranchConfig{
				{Layers: layers(e2e(2), e2n(3), gconv(4), n2g(5))},
				{Input: "structural", Layers: layers(gconv(3), drop, gconv(2), n2g(4))},
				{Input: "propagated", Layers: layers(linear(e2e(2)))},
				{Layers: layers(e2n(2))},
			},
			Head: []int{6, 3}, HeadDropout: 0.2,
		},
		"product": {
			Merge: "product",
			Branches: []BranchConfig{
				{Layers: layers(e2e(2), n2g(4))},
				{Input: "structural", Layers: layers(gconv(3), n2g(4))},
				{Layers: layers(e2n(2), linear(n2g(4)))},
			},
		},
	}
}

// machineNet returns a network of cfg at p = 8 with two targets and the
// prepared set of 4 participants it trains on, one of whose scores is
// missing.
func machineNet(t *testing.T, cfg Config, dtype DType) (*Network, *prepared, []int) {
	t.Helper()
	const p, n = 8, 4
	cfg.DType, cfg.BatchSize = dtype, new(n)
	cfg.SetDefaults()
	ps, y := plantedCohort(n, p, 0.5, 7)
	net, err := New(cfg, p, 2, 5)
	if err != nil {
		t.Fatal(err)
	}
	set, err := net.prepare(dataset(ps, withSecondTarget(y, 1), 0, n), "test", true)
	if err != nil {
		t.Fatal(err)
	}
	return net, set, []int{0, 1, 2, 3}
}

// TestTrainStepAllocatesNothing checks issue #7: once the graph of a batch
// size and the buffers of its ops exist, a training step (filling the
// inputs and masks, forward, backward, copying out the gradients and the
// loss) allocates nothing.
func TestTrainStepAllocatesNothing(t *testing.T) {
	for name, cfg := range machineConfigs() {
		for _, dtype := range []DType{Float32, Float64} {
			t.Run(name+"/"+string(dtype), func(t *testing.T) {
				net, set, idx := machineNet(t, cfg, dtype)
				var err error
				step := func() {
					if _, _, e := net.trainStep(set, idx); e != nil {
						err = e
					}
				}
				step() // builds the graph and the buffers
				if a := testing.AllocsPerRun(20, step); a != 0 {
					t.Errorf("a training step allocates %v times", a)
				}
				if err != nil {
					t.Fatal(err)
				}
			})
		}
	}
}

// TestMachineMatchesTapeMachine runs the training and saliency graphs of
// every configuration with gorgonia's own executor, its tape machine, and
// with ours: the predictions and gradients must be the same bits.
func TestMachineMatchesTapeMachine(t *testing.T) {
	for name, cfg := range machineConfigs() {
		for _, dtype := range []DType{Float32, Float64} {
			for _, saliency := range []bool{false, true} {
				t.Run(fmt.Sprintf("%s/%s/saliency=%v", name, dtype, saliency), func(t *testing.T) {
					net, set, idx := machineNet(t, cfg, dtype)
					g, err := net.build(len(idx), !saliency, saliency)
					if err != nil {
						t.Fatal(err)
					}
					set.fill(g, idx)
					for i, m := range g.masks {
						if err := ops.FillMask(m, g.rates[i], net.rng); err != nil {
							t.Fatal(err)
						}
					}
					outputs := append([]*gorgonia.Node{g.pred}, g.grads...)
					if saliency {
						copyInto(g.outputWeights, 0, []float64{1, 0.5, -1, 2, 0, 1, 3, -0.25})
						outputs = append(outputs, g.inputGrads...)
					}
					if err := g.m.run(); err != nil {
						t.Fatal(err)
					}
					ours := make([]*tensor.Dense, len(outputs))
					for i, n := range outputs {
						ours[i] = g.m.dense(n).Clone().(*tensor.Dense)
					}
					tape := gorgonia.NewTapeMachine(g.g)
					defer tape.Close()
					if err := tape.RunAll(); err != nil {
						t.Fatal(err)
					}
					for i, n := range outputs {
						theirs, ok := n.Value().(*tensor.Dense)
						if !ok {
							t.Fatalf("%v: the tape machine's value is a %T", n.Name(), n.Value())
						}
						for k := range theirs.DataSize() {
							a, b := valueAt(ours[i], k), valueAt(theirs, k)
							if math.Float64bits(a) != math.Float64bits(b) {
								t.Fatalf("%v: value %d is %v here and %v by the tape machine", n.Name(), k, a, b)
							}
						}
					}
				})
			}
		}
	}
}

// TestMachineErrorNamesNode checks that a failing op is reported with its
// node.
func TestMachineErrorNamesNode(t *testing.T) {
	g := gorgonia.NewGraph()
	xv := tensor.New(tensor.WithShape(2, 3), tensor.WithBacking(make([]float64, 6)))
	x := gorgonia.NewMatrix(g, tensor.Float64, gorgonia.WithShape(2, 3), gorgonia.WithValue(xv), gorgonia.WithName("x"))
	y, err := ops.LeakyReLU(x, 0.1)
	if err != nil {
		t.Fatal(err)
	}
	m, err := newMachine(g)
	if err != nil {
		t.Fatal(err)
	}
	if err := xv.Reshape(3, 2); err != nil { // the op was built for (2, 3)
		t.Fatal(err)
	}
	err = m.run()
	if err == nil {
		t.Fatal("a run with an input of the wrong shape succeeded")
	}
	if !strings.Contains(err.Error(), y.Name()) {
		t.Errorf("error %q does not name the node %q", err, y.Name())
	}
}

// TestMachineNeedsValues checks that a leaf node without a value is
// refused when the machine is made.
func TestMachineNeedsValues(t *testing.T) {
	g := gorgonia.NewGraph()
	x := gorgonia.NewMatrix(g, tensor.Float64, gorgonia.WithShape(2, 3), gorgonia.WithName("unbound"))
	if _, err := ops.LeakyReLU(x, 0.1); err != nil {
		t.Fatal(err)
	}
	if _, err := newMachine(g); err == nil || !strings.Contains(err.Error(), "unbound") {
		t.Errorf("newMachine: error %v, want one naming the unbound node", err)
	}
}
