package graphnet

import (
	"fmt"

	"gonum.org/v1/gonum/mat"
	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

var _ model.ReferenceInterpreter = (*Network)(nil)

// EdgeImportance returns, per input view v and target t, the gradient ×
// input saliency of the network over ps (Simonyan et al. 2014; Shrikumar
// et al. 2017): a view is one input matrix X_v of one branch (the
// functional or structural matrix, or the propagated S·F, as the branch
// reads it; a branch with several views has one per view), and
//
//	M_vt = (1/n) Σᵢ X_vi ∘ ∂ŷ_it/∂X_vi
//
// averaged over the n participants of ps, computed without dropout, then
// symmetrized, (M + Mᵀ)/2, with a zero diagonal. Entry (i, j) is how much
// edge (i, j) of that view contributes to prediction t to first order, in
// the units of the Y the network was fitted on; the sign says whether the
// edge, at its value, raises or lowers the prediction. Views of different
// matrices are never summed: the maps come view after view, in the order
// of Config.ImportanceViews (branches in order, a branch's views in
// order), each p × p: map v·T + t for T targets.
func (n *Network) EdgeImportance(ps []*data.Participant) ([]*mat.Dense, error) {
	return n.EdgeImportanceFrom(ps, nil)
}

// EdgeImportanceFrom is EdgeImportance with X_bi replaced by X_bi − R_bi,
// R_bi the input of branch b for ref[i] (model.ReferenceInterpreter); nil
// ref means R = 0. The runner passes as ref the standardized zero matrix
// when the network learns from matrices standardized per edge, z = (x −
// μ)/σ: then X − R = x/σ, and the map is Σ x ∘ ∂ŷ/∂x over the raw
// matrices x (by the chain rule), in the same units as without
// standardization. For a "propagated" branch, X − R = S·(x/σ)·Sᵀ (or
// S·(x/σ)), the propagated raw matrix; for a "product" view, X − R =
// zF∘zS − rF∘rS, the product view measured from that of the zero
// matrices.
func (n *Network) EdgeImportanceFrom(ps, ref []*data.Participant) ([]*mat.Dense, error) {
	if len(ps) == 0 {
		return nil, fmt.Errorf("graphnet: EdgeImportance: no participants")
	}
	if ref != nil && len(ref) != len(ps) {
		return nil, fmt.Errorf("graphnet: EdgeImportance: %d reference participants for %d participants", len(ref), len(ps))
	}
	set, err := n.prepare(model.Dataset{Participants: ps}, "saliency set", false)
	if err != nil {
		return nil, err
	}
	var refSet *prepared
	if ref != nil {
		if refSet, err = n.prepare(model.Dataset{Participants: ref}, "saliency reference", false); err != nil {
			return nil, err
		}
	}
	p, pp := n.p, n.p*n.p
	firstView := make([]int, len(set.inputs)) // index of each branch's first view
	views := 0
	for b := range set.inputs {
		firstView[b] = views
		views += len(set.inputs[b][0]) / pp
	}
	sums := make([][]float64, views*n.targets) // view v, target t at v·T + t
	for k := range sums {
		sums[k] = make([]float64, pp)
	}
	for start := 0; start < set.len(); start += *n.cfg.BatchSize {
		idx := make([]int, 0, min(*n.cfg.BatchSize, set.len()))
		for i := start; i < min(start+*n.cfg.BatchSize, set.len()); i++ {
			idx = append(idx, i)
		}
		g, err := n.saliencyGraph(len(idx))
		if err != nil {
			return nil, err
		}
		set.fill(g, idx)
		for t := range n.targets {
			w := make([]float64, len(idx)*n.targets)
			for k := range idx {
				w[k*n.targets+t] = 1
			}
			copyInto(g.outputWeights, 0, w)
			if err := g.m.run(); err != nil {
				return nil, fmt.Errorf("graphnet: EdgeImportance: %w", err)
			}
			for b, grad := range g.inputGrads {
				gv := g.m.dense(grad)
				for k, i := range idx {
					x := set.inputs[b][i] // C·p² values, one p×p block per view
					off := k * len(x)
					if refSet == nil {
						for e, v := range x {
							sums[(firstView[b]+e/pp)*n.targets+t][e%pp] += v * valueAt(gv, off+e)
						}
						continue
					}
					r := refSet.inputs[b][i]
					for e, v := range x {
						sums[(firstView[b]+e/pp)*n.targets+t][e%pp] += (v - r[e]) * valueAt(gv, off+e)
					}
				}
			}
		}
	}
	maps := make([]*mat.Dense, len(sums))
	inv := 1 / float64(set.len())
	for t, s := range sums {
		m := mat.NewDense(p, p, nil)
		for i := range p {
			for j := i + 1; j < p; j++ {
				v := (s[i*p+j] + s[j*p+i]) / 2 * inv
				m.Set(i, j, v)
				m.Set(j, i, v)
			}
		}
		maps[t] = m
	}
	return maps, nil
}

// saliencyGraph returns the evaluation graph for a batch size that also
// computes the gradient of Σ outputWeights ∘ pred with respect to every
// branch input, building it on first use.
func (n *Network) saliencyGraph(batch int) (*graph, error) {
	key := graphKey{batch: batch, saliency: true}
	if g, ok := n.graphs[key]; ok {
		return g, nil
	}
	g, err := n.build(batch, false, true)
	if err != nil {
		return nil, err
	}
	n.graphs[key] = g
	return g, nil
}

// inputGradients adds to pred's graph the gradients of the scalar
// Σ w ∘ pred with respect to inputs, w a constant of pred's shape made by
// constant. The gradient of that scalar with respect to pred is w, so the
// backward pass starts from w itself; the scalar is never computed.
func inputGradients(pred *gorgonia.Node, inputs []*gorgonia.Node, constant func(string, ...int) (*gorgonia.Node, *tensor.Dense, error)) ([]*gorgonia.Node, *tensor.Dense, error) {
	w, wv, err := constant("saliency.weights", pred.Shape()...)
	if err != nil {
		return nil, nil, err
	}
	grads, err := gorgonia.Backpropagate(gorgonia.Nodes{pred}, gorgonia.Nodes{w}, inputs)
	if err != nil {
		return nil, nil, err
	}
	return grads, wv, nil
}
