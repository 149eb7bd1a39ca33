package graphnet

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"

	"github.com/skein-neuro/skein/model/graphnet/internal/ops"
)

// param is one weight array of a network. Its value is shared by the
// expression graphs of every batch size, so an optimizer step on its
// backing slice is seen by all of them.
type param struct {
	name          string       // the array name in a saved model, e.g. "branch0.layer1.weight"
	shape         tensor.Shape // as saved and as the graph nodes have it
	value         *tensor.Dense
	grad          *tensor.Dense // gradient of the last training step, same shape
	fanIn, fanOut int
}

// createParams creates the weight arrays of the architecture in a fixed order:
// for each branch and layer, then for each head layer and the output layer.
func (n *Network) createParams() {
	n.params = nil
	add := func(name string, fanIn, fanOut int, shape ...int) {
		p := &param{
			name:  name,
			shape: tensor.Shape(shape).Clone(),
			value: tensor.New(tensor.Of(n.dtype), tensor.WithShape(shape...)),
			grad:  tensor.New(tensor.Of(n.dtype), tensor.WithShape(shape...)),
			fanIn: fanIn, fanOut: fanOut,
		}
		n.params = append(n.params, p)
	}
	for bi, b := range n.cfg.Branches {
		in := layerShape{form: edgeForm, width: size{len(b.views()), 0}}
		for li, l := range b.Layers {
			pre := fmt.Sprintf("branch%d.layer%d.", bi, li)
			switch l.Kind {
			case LayerEdge:
				c, o := in.width.at(n.p), l.units()
				add(pre+"weight", c, o, o, c)
				add(pre+"bias", 0, 0, o)
			case LayerE2E:
				c := in.width.at(n.p)
				add(pre+"row", 2*c*n.p, 2*l.Channels*n.p, l.Channels, c, n.p)
				add(pre+"col", 2*c*n.p, 2*l.Channels*n.p, l.Channels, c, n.p)
				add(pre+"bias", 0, 0, l.Channels)
			case LayerE2N:
				c := in.width.at(n.p)
				add(pre+"weight", c*n.p, l.Channels, l.Channels, c, n.p)
				add(pre+"bias", 0, 0, l.Channels)
			case LayerGraphConv:
				f := nodeFeatures(in, n.p)
				add(pre+"weight", f, l.Size, f, l.Size)
			case LayerN2G:
				d := in.flat().at(n.p)
				add(pre+"weight", d, l.Size, d, l.Size)
				add(pre+"bias", 0, 0, l.Size)
			}
			in = n.arch.shapes[bi][li]
		}
	}
	d := n.arch.merged
	for hi, h := range n.cfg.Head {
		add(fmt.Sprintf("head%d.weight", hi), d, h, d, h)
		add(fmt.Sprintf("head%d.bias", hi), 0, 0, h)
		d = h
	}
	add("output.weight", d, n.targets, d, n.targets)
	add("output.bias", 0, 0, n.targets)
}

// nodeFeatures returns the features per node of a graph_conv input.
func nodeFeatures(in layerShape, p int) int {
	if in.form == edgeForm { // the one-channel branch input: rows are features
		return p
	}
	return in.width.at(p)
}

// initParams draws every weight from the seeded source: He normal
// (standard deviation sqrt(2/fan_in)) or Glorot uniform (±sqrt(6/(fan_in +
// fan_out))); biases (fan_in 0) start at zero, and so do the output
// layer's weights (the last weight array but its bias) with output_init
// "zero", which draws nothing for them.
func (n *Network) initParams(rng *rand.Rand) {
	for k, p := range n.params {
		draw := func() float64 { return 0 }
		switch {
		case p.fanIn == 0:
		case k == len(n.params)-2 && n.cfg.OutputInit == OutputZero:
		case n.cfg.Init == InitGlorot:
			limit := math.Sqrt(6 / float64(p.fanIn+p.fanOut))
			draw = func() float64 { return (2*rng.Float64() - 1) * limit }
		default:
			std := math.Sqrt(2 / float64(p.fanIn))
			draw = func() float64 { return rng.NormFloat64() * std }
		}
		switch w := p.value.Data().(type) {
		case []float64:
			for i := range w {
				w[i] = draw()
			}
		case []float32:
			for i := range w {
				w[i] = float32(draw())
			}
		}
	}
}

// graph is the expression graph of one batch size, for training (dropout on,
// gradients) or for evaluation.
type graph struct {
	batch    int
	training bool
	g        *gorgonia.ExprGraph
	m        *machine // runs g

	inputs    []*tensor.Dense // per branch: (batch, C, p, p), C its number of views
	operators []*tensor.Dense // per branch: (batch, p, p), nil without operator
	target    *tensor.Dense   // (batch, T), NaN = missing
	masks     []*tensor.Dense // dropout masks, refilled before every step
	rates     []float64       // the rate of each mask

	pred  *gorgonia.Node   // (batch, T)
	grads []*gorgonia.Node // gradient of the loss for each param, training only

	// Saliency graphs only: outputWeights (batch, T) weighs the outputs
	// summed into the differentiated scalar Σ outputWeights ∘ pred, and
	// inputGrads holds its gradient with respect to each branch's input,
	// (batch, C, p, p).
	outputWeights *tensor.Dense
	inputGrads    []*gorgonia.Node
}

// build returns the expression graph of the network for batch participants.
// With saliency (and not training) it differentiates Σ outputWeights ∘ pred
// with respect to the branch inputs instead of the loss with respect to
// the weights (see saliency.go).
func (n *Network) build(batch int, training, saliency bool) (*graph, error) {
	gr := &graph{batch: batch, training: training, g: gorgonia.NewGraph()}
	g := gr.g
	dt := n.dtype
	weights := make([]*gorgonia.Node, len(n.params))
	for i, p := range n.params {
		weights[i] = gorgonia.NewTensor(g, dt, p.value.Dims(), gorgonia.WithShape(p.value.Shape()...), gorgonia.WithValue(p.value), gorgonia.WithName(p.name))
	}
	next := 0
	take := func() *gorgonia.Node { w := weights[next]; next++; return w }
	constant := func(name string, shape ...int) (*gorgonia.Node, *tensor.Dense, error) {
		v := tensor.New(tensor.Of(dt), tensor.WithShape(shape...))
		node := gorgonia.NewTensor(g, dt, len(shape), gorgonia.WithShape(shape...), gorgonia.WithName(name))
		return node, v, gorgonia.Let(node, v)
	}
	slope := *n.cfg.Slope
	onPool := ops.WithPool(n.pool)
	activate := func(h *gorgonia.Node, activation Activation) (*gorgonia.Node, error) {
		if activation == ActivationNone {
			return h, nil
		}
		return ops.LeakyReLU(h, slope, onPool)
	}
	dropout := func(h *gorgonia.Node, rate float64) (*gorgonia.Node, error) {
		if !training || rate == 0 {
			return h, nil
		}
		mask, v, err := constant(fmt.Sprintf("mask%d", len(gr.masks)), h.Shape()...)
		if err != nil {
			return nil, err
		}
		gr.masks = append(gr.masks, v)
		gr.rates = append(gr.rates, rate)
		return ops.Dropout(h, mask, onPool)
	}
	p := n.p
	var outs, inputs []*gorgonia.Node
	for bi, b := range n.cfg.Branches {
		x, xv, err := constant(fmt.Sprintf("branch%d.input", bi), batch, len(b.views()), p, p)
		if err != nil {
			return nil, err
		}
		gr.inputs = append(gr.inputs, xv)
		inputs = append(inputs, x)
		var s *gorgonia.Node
		var sv *tensor.Dense
		if b.hasGraphConv() {
			if s, sv, err = constant(fmt.Sprintf("branch%d.operator", bi), batch, p, p); err != nil {
				return nil, err
			}
		}
		gr.operators = append(gr.operators, sv)
		h := x
		if h, err = dropout(h, b.InputDropout); err != nil {
			return nil, fmt.Errorf("graphnet: building model.network.branch[%d].input_dropout: %w", bi, err)
		}
		in := layerShape{form: edgeForm, width: size{len(b.views()), 0}}
		fromData := !saliency // h depends on no weight: its gradient is never needed
		nodeMajor := false    // h is an e2e output laid out for the e2n after it
		for li, l := range b.Layers {
			opts := []ops.Option{onPool}
			if fromData {
				opts = append(opts, ops.NoInputGrad())
			}
			switch {
			case l.Kind == LayerE2E && feedsE2N(b.Layers[li+1:]):
				opts = append(opts, ops.NodeMajor())
				nodeMajor = true
			case l.Kind == LayerE2N && nodeMajor:
				opts = append(opts, ops.NodeMajor())
				nodeMajor = false
			}
			fromData = fromData && l.Kind == LayerDropout
			// The rectifier fused into an e2e filter saves a batch-sized
			// buffer forward and backward.
			fusedE2E := l.Kind == LayerE2E && l.Activation != ActivationNone && slope >= 0
			switch l.Kind {
			case LayerE2E:
				if fusedE2E {
					opts = append(opts, ops.WithLeakyReLU(slope))
				}
				if nodeMajor && li+1 < len(b.Layers) && b.Layers[li+1].Kind == LayerE2N && (fusedE2E || l.Activation == ActivationNone) {
					// The E2N right after reads the output alone and
					// makes it again from the E2E's terms: it is not
					// stored.
					opts = append(opts, ops.OutputUnread())
				}
				h, err = ops.E2E(h, take(), take(), take(), opts...)
			case LayerE2N:
				h, err = ops.E2N(h, take(), take(), opts...)
			case LayerEdge:
				h, err = ops.EdgeDense(h, take(), take(), opts...)
			case LayerGraphConv:
				switch {
				case in.form == edgeForm:
					h, err = ops.Reshape(h, tensor.Shape{batch, p, p})
				case in.channelFirst:
					h, err = ops.SwapLastAxes(h)
				}
				if err == nil {
					h, err = ops.GraphConv(s, h, take(), opts...)
				}
			case LayerN2G:
				h, err = ops.Dense(h, take(), take(), opts...)
			case LayerDropout:
				h, err = dropout(h, l.Rate)
			}
			if err == nil && l.Kind != LayerDropout && !fusedE2E {
				h, err = activate(h, l.Activation)
			}
			if err != nil {
				return nil, fmt.Errorf("graphnet: building model.network.branch[%d].layers[%d] (%s): %w", bi, li, l.Kind, err)
			}
			in = n.arch.shapes[bi][li]
		}
		if h, err = flatten(h); err != nil {
			return nil, err
		}
		outs = append(outs, h)
	}
	h := outs[0]
	var err error
	switch {
	case len(outs) == 1:
	case n.cfg.Merge == MergeProduct:
		for _, o := range outs[1:] {
			if h, err = ops.Product(h, o); err != nil {
				break
			}
		}
	default:
		h, err = ops.Concat(outs...)
	}
	if err != nil {
		return nil, fmt.Errorf("graphnet: merging branches: %w", err)
	}
	for hi := range n.cfg.Head {
		if h, err = ops.Dense(h, take(), take(), onPool); err == nil {
			if h, err = activate(h, ActivationLeakyReLU); err == nil {
				h, err = dropout(h, n.cfg.HeadDropout)
			}
		}
		if err != nil {
			return nil, fmt.Errorf("graphnet: building model.network.head[%d]: %w", hi, err)
		}
	}
	if gr.pred, err = ops.Dense(h, take(), take(), onPool); err != nil {
		return nil, fmt.Errorf("graphnet: building the output layer: %w", err)
	}
	target, tv, err := constant("target", batch, n.targets)
	if err != nil {
		return nil, err
	}
	gr.target = tv
	if training {
		loss, err := maskedLoss(gr.pred, target, n.loss)
		if err != nil {
			return nil, fmt.Errorf("graphnet: building the loss: %w", err)
		}
		if gr.grads, err = gorgonia.Grad(loss, weights...); err != nil {
			return nil, fmt.Errorf("graphnet: building the gradient: %w", err)
		}
	}
	if saliency && !training {
		if gr.inputGrads, gr.outputWeights, err = inputGradients(gr.pred, inputs, constant); err != nil {
			return nil, fmt.Errorf("graphnet: building the saliency: %w", err)
		}
	}
	outputs := append(append(gorgonia.Nodes{gr.pred}, gr.grads...), gr.inputGrads...)
	if gr.m, err = newMachine(g, outputs...); err != nil {
		return nil, err
	}
	return gr, nil
}

// feedsE2N reports whether the first of layers that is not a dropout is
// an e2n: the e2e before them then hands its output over node-major
// (ops.NodeMajor).
func feedsE2N(layers []LayerConfig) bool {
	for _, l := range layers {
		if l.Kind != LayerDropout {
			return l.Kind == LayerE2N
		}
	}
	return false
}

// flatten reads a (B, …) node as (B, D), without copying.
func flatten(h *gorgonia.Node) (*gorgonia.Node, error) {
	s := h.Shape()
	if s.Dims() == 2 {
		return h, nil
	}
	return ops.Reshape(h, tensor.Shape{s[0], s.TotalSize() / s[0]})
}
