package ops

import (
	"math"
	"math/rand/v2"
	"testing"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// TestRegenGradWSameBits checks that the weight gradient of a node-major
// E2N after an E2E, made from the E2E's terms (regenGradW), has the bits
// of the product G·H' on the E2E's stored output, with more rows (B·p)
// than one block of regenBlock so that blocks are added up.
func TestRegenGradWSameBits(t *testing.T) {
	const B, C, P, O1, O2 = 3, 2, 100, 3, 4
	for _, leaky := range []bool{false, true} {
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
		if gw, ok := grads[1].Op().(*gradWOp); !ok || gw.from == nil {
			t.Fatalf("leaky %v: the weight gradient is not made from the E2E's terms", leaky)
		}
		m := gorgonia.NewTapeMachine(g)
		if err := m.RunAll(); err != nil {
			t.Fatal(err)
		}
		hv := h.Value().Data().([]float32) // H', (B, p, O1, p)
		dv := dOut.Value().Data().([]float32)
		gt := make([]float32, O2*B*P) // G[o, n, i] = dOut[n, o, i]
		for s := range B {
			for o := range O2 {
				copy(gt[(o*B+s)*P:][:P], dv[(s*O2+o)*P:][:P])
			}
		}
		want := make([]float32, O2*O1*P)
		serialGemm(false, false, O2, O1*P, B*P, 1, gt, B*P, hv, O1*P, 0, want, O1*P)
		got := grads[1].Value().Data().([]float32)
		for i := range want {
			if math.Float32bits(got[i]) != math.Float32bits(want[i]) {
				t.Fatalf("leaky %v: dW[%d] = %v, G·H' gives %v", leaky, i, got[i], want[i])
			}
		}
		m.Close()
	}
}
