package ops

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// TestRegenSameBits checks that a node-major E2N after an E2E, which
// makes its input again from the E2E's terms (regenRowTerm, regenGradW),
// gives the bits of the products W·H'ᵀ and G·H' on the E2E's stored
// output H', with more rows (B·p) and columns (C·p) than one block of
// regenBlock so that blocks are added up; and that with OutputUnread
// (H' not stored) the output and the weight gradient are the same bits.
func TestRegenSameBits(t *testing.T) {
	const B, C, P, O1, O2 = 3, 2, 100, 3, 4
	for _, leaky := range []bool{false, true} {
		var stored [][]float32 // N and dW with H' stored
		for _, unread := range []bool{false, true} {
			rng := rand.New(rand.NewPCG(21, 22))
			g := gorgonia.NewGraph()
			dt := tensor.Float32
			node := func(name string, s ...int) *gorgonia.Node {
				return gorgonia.NewTensor(g, dt, len(s), gorgonia.WithShape(s...), gorgonia.WithValue(randomTensor(dt, s, rng)), gorgonia.WithName(name))
			}
			x, wr, wc, b := node("x", B, C, P, P), node("wr", O1, C, P), node("wc", O1, C, P), node("b", O1)
			w2, b2 := node("w2", O2, O1, P), node("b2", O2)
			opts := []Option{NodeMajor()}
			if leaky {
				opts = append(opts, WithLeakyReLU(0.2))
			}
			if unread {
				opts = append(opts, OutputUnread())
			}
			h, err := E2E(x, wr, wc, b, opts...)
			if err != nil {
				t.Fatal(err)
			}
			n, err := E2N(h, w2, b2, NodeMajor())
			if err != nil {
				t.Fatal(err)
			}
			dOut := node("dOut", B, O2, P)
			grads, err := n.Op().(gorgonia.SDOp).SymDiff(gorgonia.Nodes{h, w2, b2}, n, dOut)
			if err != nil {
				t.Fatal(err)
			}
			if n.Op().(*e2nOp).from == nil || grads[1].Op().(*gradWOp).from == nil {
				t.Fatalf("leaky %v: the E2N does not make its input from the E2E's terms", leaky)
			}
			m := gorgonia.NewTapeMachine(g)
			if err := m.RunAll(); err != nil {
				t.Fatal(err)
			}
			got := [][]float32{slices.Clone(n.Value().Data().([]float32)), slices.Clone(grads[1].Value().Data().([]float32))}
			m.Close()
			if unread {
				for k, name := range []string{"N", "dW"} {
					if !sameBits32(got[k], stored[k]) {
						t.Errorf("leaky %v: %s with OutputUnread differs from %s with H' stored", leaky, name, name)
					}
				}
				continue
			}
			stored = got
			hv := h.Value().Data().([]float32) // H', (B, p, O1, p)
			bv, dv := b2.Value().Data().([]float32), dOut.Value().Data().([]float32)
			r := make([]float32, O2*B*P) // W·H'ᵀ, (O2, B·p)
			serialGemm(false, true, O2, B*P, O1*P, 1, w2.Value().Data().([]float32), O1*P, hv, O1*P, 0, r, B*P)
			want := make([]float32, B*O2*P)
			gt := make([]float32, O2*B*P) // G[o, n, i] = dOut[n, o, i]
			for s := range B {
				for o := range O2 {
					for i := range P {
						want[(s*O2+o)*P+i] = r[(o*B+s)*P+i] + bv[o]
					}
					copy(gt[(o*B+s)*P:][:P], dv[(s*O2+o)*P:][:P])
				}
			}
			wantW := make([]float32, O2*O1*P)
			serialGemm(false, false, O2, O1*P, B*P, 1, gt, B*P, hv, O1*P, 0, wantW, O1*P)
			if !sameBits32(got[0], want) {
				t.Errorf("leaky %v: N differs from W·H'ᵀ + b", leaky)
			}
			if !sameBits32(got[1], wantW) {
				t.Errorf("leaky %v: dW differs from G·H'", leaky)
			}
		}
	}
}

func sameBits32(a, b []float32) bool {
	for i := range a {
		if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
			return false
		}
	}
	return len(a) == len(b)
}
