package graphnet

import (
	"errors"
	"fmt"
	"math"

	"github.com/skein-neuro/skein/data"
)

// Config is a network's architecture and training settings: the
// [model.network] table of an experiment file. A zero Config is not
// usable; call SetDefaults and then Validate. For example:
//
//	[model.network]
//	merge = "concat"
//	head = [64, 32]
//	epochs = 200
//	batch_size = 16
//
//	[[model.network.branch]]
//	input = "functional"
//	layers = [{kind = "e2e", channels = 32}, {kind = "e2n", channels = 64}, {kind = "n2g", size = 128}]
//
//	[[model.network.branch]]
//	input = "propagated"
//	operator = "renormalized-adjacency"
//	layers = [{kind = "graph_conv", size = 16}, {kind = "n2g", size = 128}]
//
// Each branch maps one p × p input per participant to a feature vector; the
// branch vectors are merged (concatenated, or multiplied element-wise) and
// passed through the head: hidden dense layers of the sizes in Head, each
// followed by the activation, then a linear output layer with one output per
// target.
type Config struct {
	// Branches lists the branches ([[model.network.branch]]); at least one.
	Branches []BranchConfig `toml:"branch" json:"branch"`
	// Merge joins the branch vectors: "concat" (default) or "product"
	// (element-wise; every branch must end in the same number of features).
	Merge string `toml:"merge" json:"merge"`
	// Head holds the sizes of the hidden dense layers of the head (key
	// "head"); empty means the merged vector feeds the output layer
	// directly. Default: none.
	Head []int `toml:"head" json:"head"`
	// HeadDropout is the dropout rate after each hidden head layer (key
	// "head_dropout"), in [0, 1). Default 0.
	HeadDropout float64 `toml:"head_dropout" json:"head_dropout"`
	// Slope is the negative-side slope of the leaky ReLU activation used
	// after every e2e, e2n, graph_conv, n2g and hidden head layer (key
	// "slope"): f(x) = x for x > 0, slope·x otherwise. Default 0.2; 0 gives
	// the plain ReLU.
	Slope *float64 `toml:"slope" json:"slope"`
	// Init is the initialization of the weights (key "init"): "he"
	// (default; normal with standard deviation sqrt(2/fan_in), He et al.
	// 2015) or "glorot" (uniform on ±sqrt(6/(fan_in+fan_out)), Glorot &
	// Bengio 2010). The fan-in of a unit is the number of inputs it sums:
	// 2·C·p for e2e, C·p for e2n, F for graph_conv and dense layers.
	// Biases start at zero.
	Init string `toml:"init" json:"init"`
	// DType is the floating-point type of weights and computation (key
	// "dtype"): "float32" (default) or "float64".
	DType string `toml:"dtype" json:"dtype"`

	// Loss is the training loss ([model.network.loss]).
	Loss LossConfig `toml:"loss" json:"loss"`
	// Optimizer updates the weights ([model.network.optimizer]).
	Optimizer OptimizerConfig `toml:"optimizer" json:"optimizer"`

	// Epochs is the maximum number of passes over the training set (key
	// "epochs"). Default 100.
	Epochs int `toml:"epochs" json:"epochs"`
	// BatchSize is the number of participants per step (key "batch_size").
	// The last minibatch of an epoch holds the remainder. Default 16.
	BatchSize int `toml:"batch_size" json:"batch_size"`
	// Patience stops training after this many epochs without a lower
	// loss on the inner validation set (key "patience"); 0 never stops
	// early. Whenever there is a validation set, the weights of the best
	// validation epoch are restored at the end. Without one, training runs
	// all epochs and keeps the last weights. Default 20.
	Patience *int `toml:"patience" json:"patience"`
}

// BranchConfig is one branch of a network: an input signal and the layers
// applied to it, in order.
type BranchConfig struct {
	// Input is the branch's p × p input signal (key "input"): "functional"
	// (the functional matrix F), "structural" (the structural matrix, for
	// structure-only models) or "propagated" (F propagated by the
	// participant's structural operator S, see Propagate). Default
	// "functional".
	Input string `toml:"input" json:"input"`
	// Operator is the kind of the structural operator S built from each
	// participant's structural matrix (key "operator"), one of the kinds of
	// data.Operator such as "renormalized-adjacency". It is needed by the
	// "propagated" input and by graph_conv layers. Default
	// "renormalized-adjacency" when needed, else none.
	Operator string `toml:"operator" json:"operator,omitempty"`
	// Propagate says how a "propagated" input is formed (key "propagate"):
	// "left" for S·F or "both" (default) for S·F·Sᵀ.
	Propagate string `toml:"propagate" json:"propagate,omitempty"`
	// Layers lists the layers of the branch (key "layers"); at least one.
	Layers []LayerConfig `toml:"layers" json:"layers"`
}

// LayerConfig is one layer of a branch. Its kind decides which other keys
// apply:
//
//   - "e2e" (edge-to-edge filter, Kawahara et al. 2017): channels = number
//     of output channels O. On a C × p × p input X it gives the O × p × p
//     H[o,i,j] = Σ_c Σ_k (Wr[o,c,k]·X[c,i,k] + Wc[o,c,k]·X[c,k,j]) + b[o].
//   - "e2n" (edge-to-node filter, Kawahara et al. 2017): channels = O. On
//     X it gives the node features N[o,i] = Σ_c Σ_k W[o,c,k]·X[c,i,k] + b[o].
//   - "graph_conv" (graph convolution, Kipf & Welling 2017): size = G. On
//     node features H (p × F) it gives S·H·W with W F × G and no bias. It
//     takes node features from an e2n layer, another graph_conv layer, or
//     straight from a one-channel input, whose rows are the node features.
//   - "n2g" (node-to-graph): size = number of outputs; a dense layer over
//     all the features of the previous layer (edge or node), flattened.
//   - "dropout": rate in [0, 1); inverted dropout during training, identity
//     when predicting.
//
// Every layer but dropout is followed by the network's leaky ReLU unless
// activation = "none".
type LayerConfig struct {
	// Kind is the layer kind (key "kind"): "e2e", "e2n", "graph_conv",
	// "n2g" or "dropout". Required.
	Kind string `toml:"kind" json:"kind"`
	// Channels is the number of output channels of e2e and e2n (key
	// "channels"), at least 1.
	Channels int `toml:"channels" json:"channels,omitempty"`
	// Size is the number of outputs of graph_conv (per node) and n2g (key
	// "size"), at least 1.
	Size int `toml:"size" json:"size,omitempty"`
	// Rate is the dropout rate (key "rate"), in [0, 1).
	Rate float64 `toml:"rate" json:"rate,omitempty"`
	// Activation follows the layer (key "activation"): "leaky_relu"
	// (default) or "none". Not for dropout.
	Activation string `toml:"activation" json:"activation,omitempty"`
}

// LossConfig weighs the terms of the training loss. For the residuals
// e = prediction − score over the present (non-NaN) scores of a batch,
//
//	loss = abs·mean|e| + squared·mean e² + huber·mean h(e),
//
// where h(e) = e²/2 for |e| ≤ delta and delta·(|e| − delta/2) otherwise (the
// Huber function). A missing score adds nothing; a batch with no present
// score has loss 0.
type LossConfig struct {
	// Abs weighs the mean absolute error (key "abs"). Default 1.
	Abs *float64 `toml:"abs" json:"abs"`
	// Squared weighs the mean squared error (key "squared"). Default 1.
	Squared *float64 `toml:"squared" json:"squared"`
	// Huber weighs the mean Huber loss (key "huber"). Default 0.
	Huber *float64 `toml:"huber" json:"huber"`
	// Delta is the Huber threshold (key "delta"), in units of the
	// standardized scores. Default 1.
	Delta *float64 `toml:"delta" json:"delta"`
}

// OptimizerConfig chooses the optimizer and its learning-rate schedule.
type OptimizerConfig struct {
	// Kind is "adamw" (default; Adam with decoupled weight decay,
	// Loshchilov & Hutter 2019) or "sgd" (stochastic gradient descent with
	// momentum) (key "kind").
	Kind string `toml:"kind" json:"kind"`
	// Rate is the base learning rate (key "rate"). Default 1e-3.
	Rate float64 `toml:"rate" json:"rate"`
	// WeightDecay is the weight decay λ (key "weight_decay"), applied to
	// every weight and bias: decoupled (w ← w − rate·λ·w) for adamw, added to
	// the gradient (g ← g + λ·w) for sgd. Default 0.
	WeightDecay float64 `toml:"weight_decay" json:"weight_decay"`
	// Beta1 and Beta2 are Adam's moment decay rates (keys "beta1",
	// "beta2"). Defaults 0.9 and 0.999.
	Beta1 float64 `toml:"beta1" json:"beta1,omitempty"`
	Beta2 float64 `toml:"beta2" json:"beta2,omitempty"`
	// Epsilon is Adam's denominator guard (key "epsilon"). Default 1e-8.
	Epsilon float64 `toml:"epsilon" json:"epsilon,omitempty"`
	// Momentum is SGD's momentum μ (key "momentum"), in [0, 1):
	// v ← μ·v + g, w ← w − rate·v. Default 0.9.
	Momentum *float64 `toml:"momentum" json:"momentum,omitempty"`
	// ClipNorm rescales the gradient of a step so that its global L2 norm
	// over all weights is at most ClipNorm (key "clip_norm"); 0 (default)
	// never clips.
	ClipNorm float64 `toml:"clip_norm" json:"clip_norm"`
	// Schedule sets the learning rate of each epoch e = 0, 1, … (key
	// "schedule"): "constant" (default), "step" (rate·factor^⌊e/step_epochs⌋)
	// or "cosine" (min_rate + (rate − min_rate)·(1 + cos(π·e/epochs))/2).
	Schedule string `toml:"schedule" json:"schedule"`
	// StepEpochs is the period of the "step" schedule (key "step_epochs").
	// Default 30.
	StepEpochs int `toml:"step_epochs" json:"step_epochs,omitempty"`
	// Factor is the multiplier of the "step" schedule (key "factor"), in
	// (0, 1]. Default 0.1.
	Factor float64 `toml:"factor" json:"factor,omitempty"`
	// MinRate is the final rate of the "cosine" schedule (key "min_rate").
	// Default 0.
	MinRate float64 `toml:"min_rate" json:"min_rate,omitempty"`
}

// The layer kinds, inputs and other enumerated values of a Config.
const (
	kindE2E       = "e2e"
	kindE2N       = "e2n"
	kindGraphConv = "graph_conv"
	kindN2G       = "n2g"
	kindDropout   = "dropout"

	inputFunctional = "functional"
	inputStructural = "structural"
	inputPropagated = "propagated"

	activationLeakyReLU = "leaky_relu"
	activationNone      = "none"
)

func float64Ptr(v float64) *float64 { return &v }
func intPtr(v int) *int             { return &v }

// SetDefaults fills every unset field with its documented default.
func (c *Config) SetDefaults() {
	if c.Merge == "" {
		c.Merge = "concat"
	}
	if c.Slope == nil {
		c.Slope = float64Ptr(0.2)
	}
	if c.Init == "" {
		c.Init = "he"
	}
	if c.DType == "" {
		c.DType = "float32"
	}
	if c.Epochs == 0 {
		c.Epochs = 100
	}
	if c.BatchSize == 0 {
		c.BatchSize = 16
	}
	if c.Patience == nil {
		c.Patience = intPtr(20)
	}
	for i := range c.Branches {
		b := &c.Branches[i]
		if b.Input == "" {
			b.Input = inputFunctional
		}
		if b.Operator == "" && b.needsOperator() {
			b.Operator = string(data.RenormalizedAdjacency)
		}
		if b.Propagate == "" && b.Input == inputPropagated {
			b.Propagate = "both"
		}
		for j := range b.Layers {
			if b.Layers[j].Activation == "" && b.Layers[j].Kind != kindDropout {
				b.Layers[j].Activation = activationLeakyReLU
			}
		}
	}
	l := &c.Loss
	if l.Abs == nil {
		l.Abs = float64Ptr(1)
	}
	if l.Squared == nil {
		l.Squared = float64Ptr(1)
	}
	if l.Huber == nil {
		l.Huber = float64Ptr(0)
	}
	if l.Delta == nil {
		l.Delta = float64Ptr(1)
	}
	o := &c.Optimizer
	if o.Kind == "" {
		o.Kind = "adamw"
	}
	if o.Rate == 0 {
		o.Rate = 1e-3
	}
	if o.Beta1 == 0 {
		o.Beta1 = 0.9
	}
	if o.Beta2 == 0 {
		o.Beta2 = 0.999
	}
	if o.Epsilon == 0 {
		o.Epsilon = 1e-8
	}
	if o.Momentum == nil {
		o.Momentum = float64Ptr(0.9)
	}
	if o.Schedule == "" {
		o.Schedule = "constant"
	}
	if o.StepEpochs == 0 {
		o.StepEpochs = 30
	}
	if o.Factor == 0 {
		o.Factor = 0.1
	}
}

// clone returns a copy of c that shares no slice or pointer with it.
func (c Config) clone() Config {
	f := func(p *float64) *float64 {
		if p == nil {
			return nil
		}
		return float64Ptr(*p)
	}
	c.Branches = append([]BranchConfig(nil), c.Branches...)
	for i := range c.Branches {
		c.Branches[i].Layers = append([]LayerConfig(nil), c.Branches[i].Layers...)
	}
	c.Head = append([]int(nil), c.Head...)
	c.Slope = f(c.Slope)
	if c.Patience != nil {
		c.Patience = intPtr(*c.Patience)
	}
	c.Loss = LossConfig{Abs: f(c.Loss.Abs), Squared: f(c.Loss.Squared), Huber: f(c.Loss.Huber), Delta: f(c.Loss.Delta)}
	c.Optimizer.Momentum = f(c.Optimizer.Momentum)
	return c
}

// hasGraphConv reports whether a layer of the branch is a graph
// convolution, the only layer that reads the operator at every step.
func (b BranchConfig) hasGraphConv() bool {
	for _, l := range b.Layers {
		if l.Kind == kindGraphConv {
			return true
		}
	}
	return false
}

func (b BranchConfig) needsOperator() bool {
	if b.Input == inputPropagated {
		return true
	}
	for _, l := range b.Layers {
		if l.Kind == kindGraphConv {
			return true
		}
	}
	return false
}

// Validate reports the first setting that cannot work, naming its key as
// model.network.KEY, or the layer as model.network.branch[i].layers[j]
// (KIND). It checks the architecture for every number of regions p; New
// checks it again for the actual p. Validate expects SetDefaults to have
// been called.
func (c Config) Validate() error {
	if len(c.Branches) == 0 {
		return errors.New("model.network: at least one [[model.network.branch]] is required")
	}
	if c.Merge != "concat" && c.Merge != "product" {
		return fmt.Errorf("model.network.merge: want \"concat\" or \"product\", found %q", c.Merge)
	}
	if _, err := archOf(c, 0); err != nil {
		return err
	}
	for i, h := range c.Head {
		if h <= 0 {
			return fmt.Errorf("model.network.head[%d]: want a positive layer size, found %d", i, h)
		}
	}
	if !(c.HeadDropout >= 0 && c.HeadDropout < 1) {
		return fmt.Errorf("model.network.head_dropout: want a rate in [0, 1), found %v", c.HeadDropout)
	}
	if c.Slope == nil || !(*c.Slope >= 0 && *c.Slope < 1) {
		return fmt.Errorf("model.network.slope: want a slope in [0, 1), found %v", deref(c.Slope))
	}
	if c.Init != "he" && c.Init != "glorot" {
		return fmt.Errorf("model.network.init: want \"he\" or \"glorot\", found %q", c.Init)
	}
	if c.DType != "float32" && c.DType != "float64" {
		return fmt.Errorf("model.network.dtype: want \"float32\" or \"float64\", found %q", c.DType)
	}
	if c.Epochs < 1 {
		return fmt.Errorf("model.network.epochs: want at least 1, found %d", c.Epochs)
	}
	if c.BatchSize < 1 {
		return fmt.Errorf("model.network.batch_size: want at least 1, found %d", c.BatchSize)
	}
	if c.Patience == nil || *c.Patience < 0 {
		return fmt.Errorf("model.network.patience: want 0 or more epochs, found %v", derefInt(c.Patience))
	}
	if err := c.Loss.validate(); err != nil {
		return err
	}
	return c.Optimizer.validate()
}

func (l LossConfig) validate() error {
	terms := []struct {
		key string
		v   *float64
	}{{"abs", l.Abs}, {"squared", l.Squared}, {"huber", l.Huber}}
	sum := 0.0
	for _, t := range terms {
		if t.v == nil || !(*t.v >= 0) || math.IsInf(*t.v, 0) {
			return fmt.Errorf("model.network.loss.%s: want a finite weight ≥ 0, found %v", t.key, deref(t.v))
		}
		sum += *t.v
	}
	if sum == 0 {
		return errors.New("model.network.loss: the weights abs, squared and huber are all 0; want at least one positive")
	}
	if l.Delta == nil || !(*l.Delta > 0) || math.IsInf(*l.Delta, 0) {
		return fmt.Errorf("model.network.loss.delta: want a finite threshold > 0, found %v", deref(l.Delta))
	}
	return nil
}

func (o OptimizerConfig) validate() error {
	const k = "model.network.optimizer."
	switch {
	case o.Kind != "adamw" && o.Kind != "sgd":
		return fmt.Errorf(k+"kind: want \"adamw\" or \"sgd\", found %q", o.Kind)
	case !(o.Rate > 0) || math.IsInf(o.Rate, 0):
		return fmt.Errorf(k+"rate: want a finite learning rate > 0, found %v", o.Rate)
	case !(o.WeightDecay >= 0):
		return fmt.Errorf(k+"weight_decay: want ≥ 0, found %v", o.WeightDecay)
	case !(o.Beta1 > 0 && o.Beta1 < 1):
		return fmt.Errorf(k+"beta1: want a value in (0, 1), found %v", o.Beta1)
	case !(o.Beta2 > 0 && o.Beta2 < 1):
		return fmt.Errorf(k+"beta2: want a value in (0, 1), found %v", o.Beta2)
	case !(o.Epsilon > 0):
		return fmt.Errorf(k+"epsilon: want a value > 0, found %v", o.Epsilon)
	case o.Momentum == nil || !(*o.Momentum >= 0 && *o.Momentum < 1):
		return fmt.Errorf(k+"momentum: want a value in [0, 1), found %v", deref(o.Momentum))
	case !(o.ClipNorm >= 0):
		return fmt.Errorf(k+"clip_norm: want 0 (off) or a norm > 0, found %v", o.ClipNorm)
	case o.Schedule != "constant" && o.Schedule != "step" && o.Schedule != "cosine":
		return fmt.Errorf(k+"schedule: want \"constant\", \"step\" or \"cosine\", found %q", o.Schedule)
	case o.StepEpochs < 1:
		return fmt.Errorf(k+"step_epochs: want at least 1, found %d", o.StepEpochs)
	case !(o.Factor > 0 && o.Factor <= 1):
		return fmt.Errorf(k+"factor: want a value in (0, 1], found %v", o.Factor)
	case !(o.MinRate >= 0 && o.MinRate <= o.Rate):
		return fmt.Errorf(k+"min_rate: want a value in [0, rate = %v], found %v", o.Rate, o.MinRate)
	}
	return nil
}

func deref(v *float64) any {
	if v == nil {
		return "nothing"
	}
	return *v
}

func derefInt(v *int) any {
	if v == nil {
		return "nothing"
	}
	return *v
}

// form is what a layer's output holds, per participant.
type form int

const (
	edgeForm  form = iota // channels × p × p
	nodeForm              // p nodes with features each
	graphForm             // a vector
)

// size is a number of features that may depend on the number of regions p:
// coef·p^pow.
type size struct{ coef, pow int }

func (s size) at(p int) int {
	n := s.coef
	for range s.pow {
		n *= p
	}
	return n
}

func (s size) String() string {
	switch s.pow {
	case 0:
		return fmt.Sprint(s.coef)
	case 1:
		return fmt.Sprintf("%d·p", s.coef)
	}
	return fmt.Sprintf("%d·p^%d", s.coef, s.pow)
}

// layerShape is the output of one layer of a branch: its form, its channels
// (edge form), node features (node form, as coef·p^pow) or size (graph form),
// and whether its node features are stored channel-first (O × p, after e2n)
// or node-first (p × F, after graph_conv or from the input).
type layerShape struct {
	form         form
	width        size // edge: channels; node: features per node; graph: size
	channelFirst bool
}

// flat returns the number of features of the shape, flattened.
func (s layerShape) flat() size {
	switch s.form {
	case edgeForm:
		return size{s.width.coef, s.width.pow + 2}
	case nodeForm:
		return size{s.width.coef, s.width.pow + 1}
	}
	return s.width
}

// arch is a checked architecture: the shape after every layer of every
// branch, and the width of the merged vector.
type arch struct {
	shapes [][]layerShape // shapes[b][l] is the output of branch b's layer l
	merged int            // features of the merged vector; 0 when p = 0
}

// archOf checks the branch layers and the merge of c for p regions (p = 0:
// for every p, comparing sizes as polynomials in p) and returns the shapes.
func archOf(c Config, p int) (arch, error) {
	var a arch
	for bi, b := range c.Branches {
		key := fmt.Sprintf("model.network.branch[%d]", bi)
		switch b.Input {
		case inputFunctional, inputStructural, inputPropagated:
		default:
			return a, fmt.Errorf("%s.input: want \"functional\", \"structural\" or \"propagated\", found %q", key, b.Input)
		}
		if b.needsOperator() {
			if _, err := data.ParseOperatorKind(b.Operator); err != nil {
				return a, fmt.Errorf("%s.operator: %w", key, err)
			}
		} else if b.Operator != "" {
			return a, fmt.Errorf("%s.operator: %q is set but the branch uses no operator (it needs input = \"propagated\" or a graph_conv layer)", key, b.Operator)
		}
		if b.Input == inputPropagated && b.Propagate != "left" && b.Propagate != "both" {
			return a, fmt.Errorf("%s.propagate: want \"left\" or \"both\", found %q", key, b.Propagate)
		}
		if b.Input != inputPropagated && b.Propagate != "" {
			return a, fmt.Errorf("%s.propagate: is set but input is %q, not \"propagated\"", key, b.Input)
		}
		if len(b.Layers) == 0 {
			return a, fmt.Errorf("%s.layers: want at least one layer, found none", key)
		}
		cur := layerShape{form: edgeForm, width: size{1, 0}}
		var shapes []layerShape
		for li, l := range b.Layers {
			next, err := nextShape(cur, l)
			if err != nil {
				return a, fmt.Errorf("%s.layers[%d] (%s): %w", key, li, l.Kind, err)
			}
			cur = next
			shapes = append(shapes, cur)
		}
		a.shapes = append(a.shapes, shapes)
	}
	for bi := range a.shapes {
		out := a.shapes[bi][len(a.shapes[bi])-1].flat()
		if p > 0 {
			a.merged += out.at(p)
		}
		if bi == 0 || c.Merge != "product" {
			continue
		}
		first := a.shapes[0][len(a.shapes[0])-1].flat()
		if (p == 0 && first != out) || (p > 0 && first.at(p) != out.at(p)) {
			last := len(a.shapes[bi]) - 1
			return a, fmt.Errorf("model.network.branch[%d].layers[%d] (%s): merge = \"product\" needs every branch to end in the same number of features; branch[0] ends in %v, this branch in %v",
				bi, last, c.Branches[bi].Layers[last].Kind, first, out)
		}
	}
	if p > 0 && c.Merge == "product" {
		a.merged = a.shapes[0][len(a.shapes[0])-1].flat().at(p)
	}
	return a, nil
}

// nextShape returns the shape after applying layer l to an input of shape in.
func nextShape(in layerShape, l LayerConfig) (layerShape, error) {
	if l.Kind != kindDropout && l.Activation != activationLeakyReLU && l.Activation != activationNone {
		return in, fmt.Errorf("activation: want \"leaky_relu\" or \"none\", found %q", l.Activation)
	}
	needChannels := func() error {
		if l.Channels < 1 {
			return fmt.Errorf("channels: want at least 1, found %d", l.Channels)
		}
		if l.Size != 0 || l.Rate != 0 {
			return errors.New("only the keys channels and activation apply")
		}
		return nil
	}
	needSize := func() error {
		if l.Size < 1 {
			return fmt.Errorf("size: want at least 1, found %d", l.Size)
		}
		if l.Channels != 0 || l.Rate != 0 {
			return errors.New("only the keys size and activation apply")
		}
		return nil
	}
	switch l.Kind {
	case kindE2E, kindE2N:
		if err := needChannels(); err != nil {
			return in, err
		}
		if in.form != edgeForm {
			return in, fmt.Errorf("needs an edge input (channels × p × p: the branch input or an e2e layer), found the output of a %s layer", formName(in.form))
		}
		if l.Kind == kindE2E {
			return layerShape{form: edgeForm, width: size{l.Channels, 0}}, nil
		}
		return layerShape{form: nodeForm, width: size{l.Channels, 0}, channelFirst: true}, nil
	case kindGraphConv:
		if err := needSize(); err != nil {
			return in, err
		}
		switch {
		case in.form == nodeForm:
		case in.form == edgeForm && in.width == size{1, 0}:
		default:
			return in, fmt.Errorf("needs node features (an e2n or graph_conv layer, or the one-channel branch input), found the output of %s", describe(in))
		}
		return layerShape{form: nodeForm, width: size{l.Size, 0}}, nil
	case kindN2G:
		if err := needSize(); err != nil {
			return in, err
		}
		if in.form == graphForm {
			return in, errors.New("needs edge or node features, found the output of an n2g layer (use head for further dense layers)")
		}
		return layerShape{form: graphForm, width: size{l.Size, 0}}, nil
	case kindDropout:
		if !(l.Rate >= 0 && l.Rate < 1) {
			return in, fmt.Errorf("rate: want a rate in [0, 1), found %v", l.Rate)
		}
		if l.Channels != 0 || l.Size != 0 || l.Activation != "" {
			return in, errors.New("only the key rate applies")
		}
		return in, nil
	}
	return in, fmt.Errorf("kind: want \"e2e\", \"e2n\", \"graph_conv\", \"n2g\" or \"dropout\", found %q", l.Kind)
}

func formName(f form) string {
	switch f {
	case edgeForm:
		return "edge"
	case nodeForm:
		return "node"
	}
	return "graph"
}

func describe(s layerShape) string {
	if s.form == edgeForm {
		return fmt.Sprintf("an edge layer with %v channels", s.width)
	}
	return fmt.Sprintf("a %s layer", formName(s.form))
}
