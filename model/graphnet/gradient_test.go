package graphnet

import (
	"math"
	"testing"
)

// TestGradientFiniteDifference checks the gradient of whole networks in
// float64 against central finite differences of the loss (the standard
// gradient check, e.g. Goodfellow, Bengio & Courville 2016, Deep Learning,
// §11.5; common practice).
func TestGradientFiniteDifference(t *testing.T) {
	tests := []struct {
		name  string
		cfg   Config
		setup func(*Config)
	}{
		{"one branch e2e e2n n2g", testConfig("float64", BranchConfig{Layers: layers(e2e(3), e2n(4), n2g(5))}), nil},
		{"two branches concat with graph conv", testConfig("float64",
			BranchConfig{Layers: layers(e2e(2), e2n(3), n2g(4))},
			BranchConfig{Input: "propagated", Operator: "renormalized-adjacency", Layers: layers(gconv(3), gconv(2), n2g(4))}), nil},
		{"two branches product", testConfig("float64",
			BranchConfig{Layers: layers(e2n(3), gconv(2), n2g(4))},
			BranchConfig{Input: "structural", Layers: layers(e2e(2), e2n(2), n2g(4))}), func(c *Config) { c.Merge = "product" }},
		{"views with edge layers", testConfig("float64",
			BranchConfig{Views: []Input{InputFunctional, InputStructural, InputPropagated}, Layers: layers(edge(3), edge(2), e2e(2), e2n(3), n2g(4))},
			BranchConfig{Views: []Input{InputStructural, InputFunctional}, Layers: layers(edge(1), gconv(2), n2g(3))}), nil},
		{"head and huber loss", testConfig("float64", BranchConfig{Input: "propagated", Propagate: "left", Layers: layers(e2n(3), n2g(6))}),
			func(c *Config) {
				c.Head = []int{5, 4}
				c.Loss.Huber = new(0.7)
				c.Loss.Delta = new(0.3)
				c.Slope = new(0.1)
			}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			cfg := tt.cfg
			if tt.setup != nil {
				tt.setup(&cfg)
			}
			cfg.SetDefaults()
			const p, n = 6, 5
			ps, y1 := plantedCohort(n, p, 0.5, 3)
			y := withSecondTarget(y1, 2) // two targets, one missing score
			net, err := New(cfg, p, 2, 11)
			if err != nil {
				t.Fatal(err)
			}
			set, err := net.prepare(dataset(ps, y, 0, n), "test", true)
			if err != nil {
				t.Fatal(err)
			}
			all := []int{0, 1, 2, 3, 4}
			if _, _, err := net.trainStep(set, all); err != nil {
				t.Fatal(err)
			}
			net.cfg.BatchSize = new(n) // evalLoss in one batch, like the step
			lossAt := func() float64 {
				l, err := net.evalLoss(set)
				if err != nil {
					t.Fatal(err)
				}
				return l
			}
			for _, prm := range net.params {
				w := prm.value.Data().([]float64)
				g := prm.grad.Data().([]float64)
				var diff, norm float64
				for i := range w {
					const h = 1e-6
					orig := w[i]
					w[i] = orig + h
					up := lossAt()
					w[i] = orig - h
					down := lossAt()
					w[i] = orig
					fd := (up - down) / (2 * h)
					diff += (fd - g[i]) * (fd - g[i])
					norm += math.Max(fd*fd, g[i]*g[i])
				}
				if norm == 0 {
					continue
				}
				if rel := math.Sqrt(diff / norm); rel > 1e-6 {
					t.Errorf("%s: relative error %.3g between gradient and finite differences", prm.name, rel)
				}
			}
		})
	}
}
