package graphnet

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/internal/enum"
)

// Config is a network's architecture and training settings: the
// [model.network] table of an experiment file. A zero Config is not
// usable; call SetDefaults and then Validate. Settings whose default is not
// 0 are pointers, so that a 0 written in a file is kept (and rejected by
// Validate where it means nothing) rather than replaced by the default: nil
// takes the default, and Go code sets one as Epochs: new(200). Word-valued
// settings take the constants of their types (Merge: MergeProduct); "" takes
// the default. For example:
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
	Merge Merge `toml:"merge" json:"merge"`
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
	// Biases start at zero. The output layer follows OutputInit instead.
	Init Init `toml:"init" json:"init"`
	// OutputInit is the initialization of the output layer's weights (key
	// "output_init"): "zero" (default) or "random" (drawn as Init says,
	// like every other weight). Its bias starts at zero either way. With
	// "zero" the untrained network predicts 0 for everyone: the training
	// mean of the standardized scores, so training starts from the mean
	// predictor and moves away from it only as far as the data lead.
	OutputInit OutputInit `toml:"output_init" json:"output_init,omitempty"`
	// StandardizeInputs says whether the network learns from matrices
	// standardized per edge over the training participants of its fold
	// (key "standardize_inputs"): each edge minus its training mean,
	// divided by its training SD (train.EdgeScaler). Default true; false
	// gives the network the matrices as preprocessing leaves them. The
	// standardization is fitted by the runner, not the network, and saved
	// with the fold model; the network only declares it wants it
	// (Config.EdgeScaling).
	StandardizeInputs *bool `toml:"standardize_inputs" json:"standardize_inputs,omitempty"`
	// DType is the floating-point type of weights and computation (key
	// "dtype"): "float32" (default) or "float64".
	DType DType `toml:"dtype" json:"dtype"`

	// Loss is the training loss for scores ([model.network.loss]); a
	// network fitted to a label minimizes the cross-entropy and ignores
	// it (see LossConfig).
	Loss LossConfig `toml:"loss" json:"loss"`
	// Optimizer updates the weights ([model.network.optimizer]).
	Optimizer OptimizerConfig `toml:"optimizer" json:"optimizer"`

	// Epochs is the maximum number of passes over the training set (key
	// "epochs"), at least 1. Default 100.
	Epochs *int `toml:"epochs" json:"epochs"`
	// BatchSize is the number of participants per step (key "batch_size"),
	// at least 1. The last minibatch of an epoch holds the remainder.
	// Default 16.
	BatchSize *int `toml:"batch_size" json:"batch_size"`
	// Patience stops training after this many epochs without a lower
	// loss on the inner validation set (key "patience"); 0 never stops
	// early. Whenever there is a validation set, the weights of the best
	// validation epoch are restored at the end. Without one, training runs
	// all epochs and keeps the last weights. Default 20.
	Patience *int `toml:"patience" json:"patience"`
	// Ensemble is the number K of networks the kind "network" trains per
	// fit and averages (key "ensemble"), at least 1. With K > 1 it builds
	// an Ensemble: the training and validation sets are joined and split
	// in K parts keeping groups whole, and member k trains on the other
	// K − 1 parts, stops early on part k and has its own seed; the
	// prediction is the mean of the members'. K = 1 is a single Network
	// trained on the training set and stopped on the validation set.
	// Training takes about K times as long. Default 5.
	Ensemble *int `toml:"ensemble" json:"ensemble,omitempty"`
	// ClassWeight weighs the participants of each class in the
	// cross-entropy of a network fitted to a label (key "class_weight";
	// see Classifier): "none" (default; every participant weighs 1) or
	// "balanced" (class k weighs w_k = n/(K·n_k) for n participants of
	// K classes, n_k of class k, counted on the training part, as
	// scikit-learn's class_weight="balanced"). A network fitted to scores
	// does not read it.
	ClassWeight ClassWeight `toml:"class_weight" json:"class_weight,omitempty"`
}

// BranchConfig is one branch of a network: an input signal and the layers
// applied to it, in order.
type BranchConfig struct {
	// Input is the branch's p × p input signal (key "input"): "functional"
	// (the functional matrix F), "structural" (the structural matrix, for
	// structure-only models), "propagated" (F propagated by the
	// participant's structural operator S, see Propagate) or "product"
	// (F∘S, the functional and the structural matrix multiplied edge by
	// edge, each as the network receives it: with standardize_inputs and
	// no operator, zF_ij·zS_ij, a multiplicative interaction of the two
	// modalities at every edge, after Jayakumar et al. 2020). Default
	// "functional" when views is not set; with views, input stays unset.
	Input Input `toml:"input" json:"input,omitempty"`
	// Views lists several input signals that the branch takes at once, as
	// the channels of one C × p × p input (key "views"), in order; each is
	// one of the words of input, at most once. A "propagated" view uses the
	// branch's operator and propagate. Set either input or views, not
	// both. With standardize_inputs, every view is standardized as it
	// would be as a branch's single input (see Config.EdgeScaling). An
	// "edge" layer lets the views interact edge by edge. Default: none
	// (the branch takes input alone).
	Views []Input `toml:"views" json:"views,omitempty"`
	// Operator is the kind of the structural operator S built from each
	// participant's structural matrix (key "operator"), one of the kinds of
	// data.Operator such as "renormalized-adjacency". It is needed by the
	// "propagated" input and by graph_conv layers. Default
	// "renormalized-adjacency" when needed, else none.
	Operator data.OperatorKind `toml:"operator" json:"operator,omitempty"`
	// InputDropout is the dropout rate on the branch's input matrix (key
	// "input_dropout"), in [0, 1): while training, every entry of the
	// input is zeroed with this probability and the others divided by
	// 1 − rate (inverted dropout, so the expected input is the input);
	// when predicting, the input passes unchanged. Default 0.
	InputDropout float64 `toml:"input_dropout" json:"input_dropout,omitempty"`
	// Screen is the number of edges of each view the branch keeps (key
	// "screen"): the Screen edges i < j whose values over the training
	// participants correlate most strongly with the training scores
	// (largest |Pearson r|; with several targets, the largest over them,
	// each on its present scores), after standardize_inputs. Every other
	// edge of the view is set to 0, for training and prediction alike: a
	// fold-fitted univariate screen (sure independence screening, Fan & Lv
	// 2008), which lets a network find a truth held by few edges among
	// many, as connectome-based predictive modelling selects its edges.
	// Fit chooses the edges on its training set (each member of an
	// ensemble on its own part) and they are saved with the network.
	// 0 (default), or at least p(p−1)/2, keeps every edge.
	Screen int `toml:"screen" json:"screen,omitempty"`
	// Propagate says how a "propagated" input is formed (key "propagate"):
	// "left" for S·F or "both" (default) for S·F·Sᵀ.
	Propagate Propagate `toml:"propagate" json:"propagate,omitempty"`
	// Layers lists the layers of the branch (key "layers"); at least one.
	Layers []LayerConfig `toml:"layers" json:"layers"`
}

// LayerConfig is one layer of a branch. Its kind decides which other keys
// apply:
//
//   - "e2e" (edge-to-edge filter, Kawahara et al. 2017): channels = number
//     of output channels O. On a C × p × p input X it gives the O × p × p
//     H[o,i,j] = Σ_c Σ_k (Wr[o,c,k]·X[c,i,k] + Wc[o,c,k]·X[c,k,j]) + b[o].
//   - "edge" (per-edge dense layer): size = number of output channels O
//     (channels is accepted instead). A dense layer applied to every
//     edge's vector of C channel values, its weights shared by all edges
//     (a 1 × 1 convolution over the p × p grid): on a C × p × p input X it
//     gives the O × p × p H[o,i,j] = Σ_c W[o,c]·X[c,i,j] + b[o]. Each
//     channel of H is symmetric when every channel of X is. Before e2e or
//     e2n layers it lets the channels of a branch with several views
//     interact edge by edge (products of modalities, once followed by the
//     activation).
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
	// Kind is the layer kind (key "kind"): "e2e", "e2n", "edge",
	// "graph_conv", "n2g" or "dropout". Required.
	Kind LayerKind `toml:"kind" json:"kind"`
	// Channels is the number of output channels of e2e and e2n (key
	// "channels"), at least 1; an edge layer takes it instead of size.
	Channels int `toml:"channels" json:"channels,omitempty"`
	// Size is the number of outputs of graph_conv (per node) and n2g, and
	// of output channels of edge (key "size"), at least 1.
	Size int `toml:"size" json:"size,omitempty"`
	// Rate is the dropout rate (key "rate"), in [0, 1).
	Rate float64 `toml:"rate" json:"rate,omitempty"`
	// Activation follows the layer (key "activation"): "leaky_relu"
	// (default) or "none". Not for dropout.
	Activation Activation `toml:"activation" json:"activation,omitempty"`
}

// LossConfig weighs the terms of the training loss of a network fitted to
// scores. A network fitted to a label (Classifier) minimizes the
// cross-entropy instead and reads none of these keys; they are still
// checked, so that one [model.network] table serves the scores and the
// labels of a mixed experiment. For the residuals
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
	Kind OptimizerKind `toml:"kind" json:"kind"`
	// Rate is the base learning rate (key "rate"), positive. Default 1e-3.
	Rate *float64 `toml:"rate" json:"rate"`
	// WeightDecay is the weight decay λ (key "weight_decay"), applied to
	// every weight and bias: decoupled (w ← w − rate·λ·w) for adamw, added to
	// the gradient (g ← g + λ·w) for sgd. Default 0. For adamw the shrink
	// of a step is rate·λ, as in Loshchilov & Hutter's and torch's AdamW:
	// λ = 1e-2 at rate 1e-3 takes 1e-5 of every weight a step, about 1% over
	// a thousand steps, so λ near 1 is needed for a strong penalty.
	WeightDecay float64 `toml:"weight_decay" json:"weight_decay"`
	// Beta1 and Beta2 are Adam's moment decay rates (keys "beta1",
	// "beta2"), each in [0, 1). Defaults 0.9 and 0.999. A 0 is honoured:
	// beta1 = 0 keeps no running mean of the gradient (m = g), beta2 = 0
	// no running mean of its square (v = g²).
	Beta1 *float64 `toml:"beta1" json:"beta1,omitempty"`
	Beta2 *float64 `toml:"beta2" json:"beta2,omitempty"`
	// Epsilon is Adam's denominator guard (key "epsilon"), positive.
	// Default 1e-8.
	Epsilon *float64 `toml:"epsilon" json:"epsilon,omitempty"`
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
	Schedule Schedule `toml:"schedule" json:"schedule"`
	// StepEpochs is the period of the "step" schedule (key "step_epochs"),
	// at least 1. Default 30.
	StepEpochs *int `toml:"step_epochs" json:"step_epochs,omitempty"`
	// Factor is the multiplier of the "step" schedule (key "factor"), in
	// (0, 1]. Default 0.1.
	Factor *float64 `toml:"factor" json:"factor,omitempty"`
	// MinRate is the final rate of the "cosine" schedule (key "min_rate").
	// Default 0.
	MinRate float64 `toml:"min_rate" json:"min_rate,omitempty"`
}

// ClassWeight is the value of the key model.network.class_weight:
// ClassWeightNone or ClassWeightBalanced ("" is unset).
type ClassWeight string

// Values of model.network.class_weight.
const (
	ClassWeightNone     ClassWeight = "none"     // every participant weighs 1
	ClassWeightBalanced ClassWeight = "balanced" // class k weighs n/(K·n_k)
)

// UnmarshalText sets w to the word text: "none", "balanced" or ""
// (unset). Another word is an error listing these.
func (w *ClassWeight) UnmarshalText(text []byte) error {
	return enum.Parse(w, text, ClassWeightNone, ClassWeightBalanced)
}

// MarshalText returns the word of w.
func (w ClassWeight) MarshalText() ([]byte, error) { return []byte(w), nil }

// String returns the word of w.
func (w ClassWeight) String() string { return string(w) }

// Merge is the value of the key model.network.merge: MergeConcat or
// MergeProduct ("" is unset).
type Merge string

// Values of model.network.merge.
const (
	MergeConcat  Merge = "concat"  // the branch vectors, one after another
	MergeProduct Merge = "product" // the element-wise product of the branch vectors
)

// Init is the value of the key model.network.init: InitHe or InitGlorot
// ("" is unset).
type Init string

// Values of model.network.init.
const (
	InitHe     Init = "he"
	InitGlorot Init = "glorot"
)

// OutputInit is the value of the key model.network.output_init:
// OutputZero or OutputRandom ("" is unset).
type OutputInit string

// Values of model.network.output_init.
const (
	OutputZero   OutputInit = "zero"   // output weights start at 0
	OutputRandom OutputInit = "random" // output weights drawn as model.network.init says
)

// DType is the value of the key model.network.dtype: Float32 or Float64
// ("" is unset).
type DType string

// Values of model.network.dtype.
const (
	Float32 DType = "float32"
	Float64 DType = "float64"
)

// Input is the value of the key input of a [[model.network.branch]]:
// InputFunctional, InputStructural or InputPropagated ("" is unset).
type Input string

// Values of the input key of a branch.
const (
	InputFunctional Input = "functional" // the functional matrix F
	InputStructural Input = "structural" // the structural matrix
	InputPropagated Input = "propagated" // F propagated by the structural operator S
	InputProduct    Input = "product"    // F∘S, the functional and structural matrices multiplied edge by edge
)

// Propagate is the value of the key propagate of a branch: PropagateLeft
// or PropagateBoth ("" is unset, and stays so unless input is
// "propagated").
type Propagate string

// Values of the propagate key of a branch.
const (
	PropagateLeft Propagate = "left" // S·F
	PropagateBoth Propagate = "both" // S·F·Sᵀ
)

// LayerKind is the value of the key kind of a layer: LayerE2E, LayerE2N,
// LayerEdge, LayerGraphConv, LayerN2G or LayerDropout ("" is unset, which is an error:
// the kind is required). See LayerConfig.
type LayerKind string

// The layer kinds.
const (
	LayerE2E       LayerKind = "e2e"
	LayerE2N       LayerKind = "e2n"
	LayerEdge      LayerKind = "edge"
	LayerGraphConv LayerKind = "graph_conv"
	LayerN2G       LayerKind = "n2g"
	LayerDropout   LayerKind = "dropout"
)

// Activation is the value of the key activation of a layer:
// ActivationLeakyReLU or ActivationNone ("" is unset, and stays so for
// dropout layers).
type Activation string

// Values of the activation key of a layer.
const (
	ActivationLeakyReLU Activation = "leaky_relu"
	ActivationNone      Activation = "none"
)

// OptimizerKind is the value of the key model.network.optimizer.kind: AdamW
// or SGD ("" is unset).
type OptimizerKind string

// The optimizers.
const (
	AdamW OptimizerKind = "adamw"
	SGD   OptimizerKind = "sgd"
)

// Schedule is the value of the key model.network.optimizer.schedule:
// ScheduleConstant, ScheduleStep or ScheduleCosine ("" is unset).
type Schedule string

// The learning-rate schedules.
const (
	ScheduleConstant Schedule = "constant"
	ScheduleStep     Schedule = "step"
	ScheduleCosine   Schedule = "cosine"
)

// UnmarshalText sets m to the word text: "concat", "product" or "" (unset).
// Another word is an error listing these.
func (m *Merge) UnmarshalText(text []byte) error {
	return enum.Parse(m, text, MergeConcat, MergeProduct)
}

// MarshalText returns the word of m.
func (m Merge) MarshalText() ([]byte, error) { return []byte(m), nil }

// String returns the word of m.
func (m Merge) String() string { return string(m) }

// UnmarshalText sets i to the word text: "he", "glorot" or "" (unset).
// Another word is an error listing these.
func (i *Init) UnmarshalText(text []byte) error { return enum.Parse(i, text, InitHe, InitGlorot) }

// MarshalText returns the word of i.
func (i Init) MarshalText() ([]byte, error) { return []byte(i), nil }

// String returns the word of i.
func (i Init) String() string { return string(i) }

// UnmarshalText sets o to the word text: "zero", "random" or "" (unset).
// Another word is an error listing these.
func (o *OutputInit) UnmarshalText(text []byte) error {
	return enum.Parse(o, text, OutputZero, OutputRandom)
}

// MarshalText returns the word of o.
func (o OutputInit) MarshalText() ([]byte, error) { return []byte(o), nil }

// String returns the word of o.
func (o OutputInit) String() string { return string(o) }

// UnmarshalText sets d to the word text: "float32", "float64" or ""
// (unset). Another word is an error listing these.
func (d *DType) UnmarshalText(text []byte) error { return enum.Parse(d, text, Float32, Float64) }

// MarshalText returns the word of d.
func (d DType) MarshalText() ([]byte, error) { return []byte(d), nil }

// String returns the word of d.
func (d DType) String() string { return string(d) }

// UnmarshalText sets in to the word text: "functional", "structural",
// "propagated", "product" or "" (unset). Another word is an error listing
// these.
func (in *Input) UnmarshalText(text []byte) error {
	return enum.Parse(in, text, InputFunctional, InputStructural, InputPropagated, InputProduct)
}

// MarshalText returns the word of in.
func (in Input) MarshalText() ([]byte, error) { return []byte(in), nil }

// String returns the word of in.
func (in Input) String() string { return string(in) }

// UnmarshalText sets p to the word text: "left", "both" or "" (unset).
// Another word is an error listing these.
func (p *Propagate) UnmarshalText(text []byte) error {
	return enum.Parse(p, text, PropagateLeft, PropagateBoth)
}

// MarshalText returns the word of p.
func (p Propagate) MarshalText() ([]byte, error) { return []byte(p), nil }

// String returns the word of p.
func (p Propagate) String() string { return string(p) }

// UnmarshalText sets k to the word text: "e2e", "e2n", "edge",
// "graph_conv", "n2g", "dropout" or "" (unset). Another word is an error
// listing these.
func (k *LayerKind) UnmarshalText(text []byte) error {
	return enum.Parse(k, text, LayerE2E, LayerE2N, LayerEdge, LayerGraphConv, LayerN2G, LayerDropout)
}

// MarshalText returns the word of k.
func (k LayerKind) MarshalText() ([]byte, error) { return []byte(k), nil }

// String returns the word of k.
func (k LayerKind) String() string { return string(k) }

// UnmarshalText sets a to the word text: "leaky_relu", "none" or ""
// (unset). Another word is an error listing these.
func (a *Activation) UnmarshalText(text []byte) error {
	return enum.Parse(a, text, ActivationLeakyReLU, ActivationNone)
}

// MarshalText returns the word of a.
func (a Activation) MarshalText() ([]byte, error) { return []byte(a), nil }

// String returns the word of a.
func (a Activation) String() string { return string(a) }

// UnmarshalText sets k to the word text: "adamw", "sgd" or "" (unset).
// Another word is an error listing these.
func (k *OptimizerKind) UnmarshalText(text []byte) error { return enum.Parse(k, text, AdamW, SGD) }

// MarshalText returns the word of k.
func (k OptimizerKind) MarshalText() ([]byte, error) { return []byte(k), nil }

// String returns the word of k.
func (k OptimizerKind) String() string { return string(k) }

// UnmarshalText sets s to the word text: "constant", "step", "cosine" or
// "" (unset). Another word is an error listing these.
func (s *Schedule) UnmarshalText(text []byte) error {
	return enum.Parse(s, text, ScheduleConstant, ScheduleStep, ScheduleCosine)
}

// MarshalText returns the word of s.
func (s Schedule) MarshalText() ([]byte, error) { return []byte(s), nil }

// String returns the word of s.
func (s Schedule) String() string { return string(s) }

// SetDefaults fills every unset field with its documented default.
func (c *Config) SetDefaults() {
	if c.Merge == "" {
		c.Merge = MergeConcat
	}
	if c.Slope == nil {
		c.Slope = new(0.2)
	}
	if c.Init == "" {
		c.Init = InitHe
	}
	if c.OutputInit == "" {
		c.OutputInit = OutputZero
	}
	if c.StandardizeInputs == nil {
		c.StandardizeInputs = new(true)
	}
	if c.DType == "" {
		c.DType = Float32
	}
	if c.Epochs == nil {
		c.Epochs = new(100)
	}
	if c.BatchSize == nil {
		c.BatchSize = new(16)
	}
	if c.Patience == nil {
		c.Patience = new(20)
	}
	if c.Ensemble == nil {
		c.Ensemble = new(5)
	}
	if c.ClassWeight == "" {
		c.ClassWeight = ClassWeightNone
	}
	for i := range c.Branches {
		b := &c.Branches[i]
		if b.Input == "" && len(b.Views) == 0 {
			b.Input = InputFunctional
		}
		if b.Operator == "" && b.needsOperator() {
			b.Operator = data.RenormalizedAdjacency
		}
		if b.Propagate == "" && b.reads(InputPropagated) {
			b.Propagate = PropagateBoth
		}
		for j := range b.Layers {
			if b.Layers[j].Activation == "" && b.Layers[j].Kind != LayerDropout {
				b.Layers[j].Activation = ActivationLeakyReLU
			}
		}
	}
	l := &c.Loss
	if l.Abs == nil {
		l.Abs = new(1.0)
	}
	if l.Squared == nil {
		l.Squared = new(1.0)
	}
	if l.Huber == nil {
		l.Huber = new(0.0)
	}
	if l.Delta == nil {
		l.Delta = new(1.0)
	}
	o := &c.Optimizer
	if o.Kind == "" {
		o.Kind = AdamW
	}
	if o.Rate == nil {
		o.Rate = new(1e-3)
	}
	if o.Beta1 == nil {
		o.Beta1 = new(0.9)
	}
	if o.Beta2 == nil {
		o.Beta2 = new(0.999)
	}
	if o.Epsilon == nil {
		o.Epsilon = new(1e-8)
	}
	if o.Momentum == nil {
		o.Momentum = new(0.9)
	}
	if o.Schedule == "" {
		o.Schedule = ScheduleConstant
	}
	if o.StepEpochs == nil {
		o.StepEpochs = new(30)
	}
	if o.Factor == nil {
		o.Factor = new(0.1)
	}
}

// EdgeScaling reports which matrices the network learns from
// standardized per edge (see StandardizeInputs and model.Kind.EdgeScaling):
// with standardize_inputs true (the default), the functional matrix when
// a branch reads it (input or view "functional", "propagated", which
// propagates the standardized F, or "product"), and the structural matrix
// when a branch reads it as its input or one of its views ("structural" or
// "product") and no branch
// builds a structural operator
// from it (an operator needs the non-negative weights preprocessing
// leaves, so the structural matrix then stays as it is for every branch).
func (c Config) EdgeScaling() (functional, structural bool) {
	if c.StandardizeInputs != nil && !*c.StandardizeInputs {
		return false, false
	}
	operator := false
	for _, b := range c.Branches {
		operator = operator || b.needsOperator()
	}
	for _, b := range c.Branches {
		for _, v := range b.views() {
			switch v {
			case InputFunctional, InputPropagated, "":
				functional = true
			case InputStructural:
				structural = !operator
			case InputProduct:
				functional, structural = true, !operator
			}
		}
	}
	return functional, structural
}

// InapplicableKeys returns the keys of c that do nothing for c's other
// settings (model.Inapplicable): Adam's under "sgd" and SGD's momentum
// under "adamw", the keys of the schedules not chosen, the Huber
// threshold without a Huber term, head_dropout without a hidden head
// layer, a branch's operator and propagate where it needs none, and each
// layer's keys that its kind does not take.
//
// It does not list the keys that only scores or only labels read
// (ScoreOnlyKeys, LabelOnlyKeys): one [model.network] table serves both in
// a mixed experiment, so whether they apply depends on the experiment's
// targets, not on c. An experiment without labels may leave out
// LabelOnlyKeys too, and one without scores ScoreOnlyKeys.
func (c Config) InapplicableKeys() []string {
	var out []string
	if len(c.Head) == 0 {
		out = append(out, "head_dropout")
	}
	if c.Loss.Huber == nil || *c.Loss.Huber == 0 {
		out = append(out, "loss.delta")
	}
	switch c.Optimizer.Kind {
	case SGD:
		out = append(out, "optimizer.beta1", "optimizer.beta2", "optimizer.epsilon")
	default:
		out = append(out, "optimizer.momentum")
	}
	if c.Optimizer.Schedule != ScheduleStep {
		out = append(out, "optimizer.step_epochs", "optimizer.factor")
	}
	if c.Optimizer.Schedule != ScheduleCosine {
		out = append(out, "optimizer.min_rate")
	}
	for i, b := range c.Branches {
		branch := fmt.Sprintf("branch[%d].", i+1)
		if !b.needsOperator() {
			out = append(out, branch+"operator")
		}
		if !b.reads(InputPropagated) {
			out = append(out, branch+"propagate")
		}
		for j, l := range b.Layers {
			layer := fmt.Sprintf("%slayers[%d].", branch, j+1)
			switch l.Kind {
			case LayerE2E, LayerE2N:
				out = append(out, layer+"size", layer+"rate")
			case LayerEdge:
				if l.Size > 0 {
					out = append(out, layer+"channels")
				} else {
					out = append(out, layer+"size")
				}
				out = append(out, layer+"rate")
			case LayerGraphConv, LayerN2G:
				out = append(out, layer+"channels", layer+"rate")
			case LayerDropout:
				out = append(out, layer+"channels", layer+"size", layer+"activation")
			}
		}
	}
	return out
}

// ScoreOnlyKeys returns the keys of c that only a network fitted to scores
// reads, as InapplicableKeys writes them: those of [model.network.loss]. A
// network fitted to a label (Classifier) minimizes the cross-entropy; it
// still validates them, and refuses none.
func (c Config) ScoreOnlyKeys() []string {
	return []string{"loss.abs", "loss.squared", "loss.huber", "loss.delta"}
}

// LabelOnlyKeys returns the keys of c that only a network fitted to a
// label reads, as InapplicableKeys writes them: class_weight.
func (c Config) LabelOnlyKeys() []string { return []string{"class_weight"} }

// Inputs reports which connectomes the network learns from: functional
// when a branch reads the functional matrix or its propagation, structural
// when a branch reads the structural matrix or needs a graph operator
// (a propagated view or a graph_conv layer), which is built from the
// structural matrix.
func (c Config) Inputs() (functional, structural bool) {
	for _, b := range c.Branches {
		for _, v := range b.views() {
			switch v {
			case InputFunctional, InputPropagated, "":
				functional = true
			case InputStructural:
				structural = true
			}
		}
		structural = structural || b.needsOperator()
	}
	return functional, structural
}

// clone returns a copy of c that shares no slice or pointer with it.
func (c Config) clone() Config {
	c.Branches = append([]BranchConfig(nil), c.Branches...)
	for i := range c.Branches {
		c.Branches[i].Layers = append([]LayerConfig(nil), c.Branches[i].Layers...)
		c.Branches[i].Views = append([]Input(nil), c.Branches[i].Views...)
	}
	c.Head = append([]int(nil), c.Head...)
	c.Slope = clonePtr(c.Slope)
	c.StandardizeInputs = clonePtr(c.StandardizeInputs)
	c.Epochs = clonePtr(c.Epochs)
	c.BatchSize = clonePtr(c.BatchSize)
	c.Patience = clonePtr(c.Patience)
	c.Ensemble = clonePtr(c.Ensemble)
	c.Loss = LossConfig{Abs: clonePtr(c.Loss.Abs), Squared: clonePtr(c.Loss.Squared), Huber: clonePtr(c.Loss.Huber), Delta: clonePtr(c.Loss.Delta)}
	o := &c.Optimizer
	o.Rate, o.Beta1, o.Beta2, o.Epsilon = clonePtr(o.Rate), clonePtr(o.Beta1), clonePtr(o.Beta2), clonePtr(o.Epsilon)
	o.Momentum, o.StepEpochs, o.Factor = clonePtr(o.Momentum), clonePtr(o.StepEpochs), clonePtr(o.Factor)
	return c
}

// clonePtr returns a new pointer to the value of p, or nil.
func clonePtr[T any](p *T) *T {
	if p == nil {
		return nil
	}
	v := *p
	return &v
}

// hasGraphConv reports whether a layer of the branch is a graph
// convolution, the only layer that reads the operator at every step.
func (b BranchConfig) hasGraphConv() bool {
	for _, l := range b.Layers {
		if l.Kind == LayerGraphConv {
			return true
		}
	}
	return false
}

// views returns the input signals of the branch, one per channel of its
// input: Views, or Input alone.
func (b BranchConfig) views() []Input {
	if len(b.Views) > 0 {
		return b.Views
	}
	return []Input{b.Input}
}

// reads reports whether in is the branch's input or one of its views.
func (b BranchConfig) reads(in Input) bool {
	return b.Input == in || slices.Contains(b.Views, in)
}

func (b BranchConfig) needsOperator() bool {
	if b.reads(InputPropagated) {
		return true
	}
	for _, l := range b.Layers {
		if l.Kind == LayerGraphConv {
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
	if err := enum.Check(c.Merge); err != nil {
		return fmt.Errorf("model.network.merge: %w", err)
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
	if err := enum.Check(c.Init); err != nil {
		return fmt.Errorf("model.network.init: %w", err)
	}
	if err := enum.Check(c.OutputInit); err != nil {
		return fmt.Errorf("model.network.output_init: %w", err)
	}
	if c.StandardizeInputs == nil {
		return errors.New("model.network.standardize_inputs: want true or false, found nothing")
	}
	if err := enum.Check(c.DType); err != nil {
		return fmt.Errorf("model.network.dtype: %w", err)
	}
	if c.Epochs == nil || *c.Epochs < 1 {
		return fmt.Errorf("model.network.epochs: want at least 1, found %v", deref(c.Epochs))
	}
	if c.BatchSize == nil || *c.BatchSize < 1 {
		return fmt.Errorf("model.network.batch_size: want at least 1, found %v", deref(c.BatchSize))
	}
	if c.Patience == nil || *c.Patience < 0 {
		return fmt.Errorf("model.network.patience: want 0 or more epochs, found %v", deref(c.Patience))
	}
	if c.Ensemble == nil || *c.Ensemble < 1 {
		return fmt.Errorf("model.network.ensemble: want at least 1 network, found %v", deref(c.Ensemble))
	}
	if err := enum.Check(c.ClassWeight); err != nil {
		return fmt.Errorf("model.network.class_weight: %w", err)
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
	if err := enum.Check(o.Kind); err != nil {
		return fmt.Errorf(k+"kind: %w", err)
	}
	if err := enum.Check(o.Schedule); err != nil {
		return fmt.Errorf(k+"schedule: %w", err)
	}
	switch {
	case o.Rate == nil || !(*o.Rate > 0) || math.IsInf(*o.Rate, 0):
		return fmt.Errorf(k+"rate: want a finite learning rate > 0, found %v", deref(o.Rate))
	case !(o.WeightDecay >= 0):
		return fmt.Errorf(k+"weight_decay: want ≥ 0, found %v", o.WeightDecay)
	case o.Beta1 == nil || !(*o.Beta1 >= 0 && *o.Beta1 < 1):
		return fmt.Errorf(k+"beta1: want a value in [0, 1), found %v", deref(o.Beta1))
	case o.Beta2 == nil || !(*o.Beta2 >= 0 && *o.Beta2 < 1):
		return fmt.Errorf(k+"beta2: want a value in [0, 1), found %v", deref(o.Beta2))
	case o.Epsilon == nil || !(*o.Epsilon > 0):
		return fmt.Errorf(k+"epsilon: want a value > 0, found %v", deref(o.Epsilon))
	case o.Momentum == nil || !(*o.Momentum >= 0 && *o.Momentum < 1):
		return fmt.Errorf(k+"momentum: want a value in [0, 1), found %v", deref(o.Momentum))
	case !(o.ClipNorm >= 0):
		return fmt.Errorf(k+"clip_norm: want 0 (off) or a norm > 0, found %v", o.ClipNorm)
	case o.StepEpochs == nil || *o.StepEpochs < 1:
		return fmt.Errorf(k+"step_epochs: want at least 1, found %v", deref(o.StepEpochs))
	case o.Factor == nil || !(*o.Factor > 0 && *o.Factor <= 1):
		return fmt.Errorf(k+"factor: want a value in (0, 1], found %v", deref(o.Factor))
	case !(o.MinRate >= 0 && o.MinRate <= *o.Rate):
		return fmt.Errorf(k+"min_rate: want a value in [0, rate = %v], found %v", *o.Rate, o.MinRate)
	}
	return nil
}

// deref formats a setting that may be unset.
func deref[T int | float64](v *T) any {
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
		if len(b.Views) == 0 {
			if err := enum.Check(b.Input); err != nil {
				return a, fmt.Errorf("%s.input: %w", key, err)
			}
		} else if b.Input != "" {
			return a, fmt.Errorf("%s.input: %q is set together with views; set one of them", key, b.Input)
		}
		for vi, v := range b.Views {
			if err := enum.Check(v); err != nil {
				return a, fmt.Errorf("%s.views[%d]: %w", key, vi, err)
			}
			if slices.Index(b.Views, v) < vi {
				return a, fmt.Errorf("%s.views[%d]: %q is listed twice", key, vi, v)
			}
		}
		if err := enum.Check(b.Operator); err != nil {
			return a, fmt.Errorf("%s.operator: %w", key, err)
		}
		if b.needsOperator() {
			if b.Operator == "" {
				return a, fmt.Errorf("%s.operator: the branch needs an operator, found none", key)
			}
		} else if b.Operator != "" {
			return a, fmt.Errorf("%s.operator: %q is set but the branch uses no operator (it needs input = \"propagated\" or a graph_conv layer)", key, b.Operator)
		}
		if err := enum.Check(b.Propagate); err != nil {
			return a, fmt.Errorf("%s.propagate: %w", key, err)
		}
		if b.reads(InputPropagated) && b.Propagate == "" {
			return a, fmt.Errorf("%s.propagate: input \"propagated\" needs %q or %q, found none", key, PropagateLeft, PropagateBoth)
		}
		if !b.reads(InputPropagated) && b.Propagate != "" {
			return a, fmt.Errorf("%s.propagate: is set but no input or view is \"propagated\" (input is %q, views %q)", key, b.Input, b.Views)
		}
		if !(b.InputDropout >= 0 && b.InputDropout < 1) {
			return a, fmt.Errorf("%s.input_dropout: want a rate in [0, 1), found %v", key, b.InputDropout)
		}
		if b.Screen < 0 {
			return a, fmt.Errorf("%s.screen: want a number of edges ≥ 0, found %d", key, b.Screen)
		}
		if len(b.Layers) == 0 {
			return a, fmt.Errorf("%s.layers: want at least one layer, found none", key)
		}
		cur := layerShape{form: edgeForm, width: size{len(b.views()), 0}}
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
	if err := enum.Check(l.Kind); err != nil {
		return in, fmt.Errorf("kind: %w", err)
	}
	if err := enum.Check(l.Activation); err != nil {
		return in, fmt.Errorf("activation: %w", err)
	}
	if l.Kind != LayerDropout && l.Activation == "" {
		return in, fmt.Errorf("activation: want %q or %q, found none", ActivationLeakyReLU, ActivationNone)
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
	case LayerEdge:
		if l.Channels != 0 && l.Size != 0 {
			return in, errors.New("set size or channels (the number of output channels), not both")
		}
		if l.units() < 1 {
			return in, fmt.Errorf("size: want at least 1 output channel, found %d", l.units())
		}
		if l.Rate != 0 {
			return in, errors.New("only the keys size (or channels) and activation apply")
		}
		if in.form != edgeForm {
			return in, fmt.Errorf("needs an edge input (channels × p × p: the branch input, an e2e or an edge layer), found the output of a %s layer", formName(in.form))
		}
		return layerShape{form: edgeForm, width: size{l.units(), 0}}, nil
	case LayerE2E, LayerE2N:
		if err := needChannels(); err != nil {
			return in, err
		}
		if in.form != edgeForm {
			return in, fmt.Errorf("needs an edge input (channels × p × p: the branch input, an e2e or an edge layer), found the output of a %s layer", formName(in.form))
		}
		if l.Kind == LayerE2E {
			return layerShape{form: edgeForm, width: size{l.Channels, 0}}, nil
		}
		return layerShape{form: nodeForm, width: size{l.Channels, 0}, channelFirst: true}, nil
	case LayerGraphConv:
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
	case LayerN2G:
		if err := needSize(); err != nil {
			return in, err
		}
		if in.form == graphForm {
			return in, errors.New("needs edge or node features, found the output of an n2g layer (use head for further dense layers)")
		}
		return layerShape{form: graphForm, width: size{l.Size, 0}}, nil
	case LayerDropout:
		if !(l.Rate >= 0 && l.Rate < 1) {
			return in, fmt.Errorf("rate: want a rate in [0, 1), found %v", l.Rate)
		}
		if l.Channels != 0 || l.Size != 0 || l.Activation != "" {
			return in, errors.New("only the key rate applies")
		}
		return in, nil
	}
	return in, errors.New(`kind: want "e2e", "e2n", "edge", "graph_conv", "n2g" or "dropout", found none`)
}

// units returns the number of output channels of an edge layer: its size,
// or its channels.
func (l LayerConfig) units() int { return max(l.Size, l.Channels) }

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

// ImportanceViews names the input views of the network's edge importance
// (Network.EdgeImportance), one per input matrix of each branch, in
// order: "functional", "structural" or "propagated" for a network of one
// branch of one input; "branch B: INPUT" (B from 1) otherwise. It expects
// SetDefaults to have been called.
func (c Config) ImportanceViews() []string {
	var views []string
	for b, br := range c.Branches {
		inputs := br.Views
		if len(inputs) == 0 {
			inputs = []Input{br.Input}
		}
		for _, in := range inputs {
			if len(c.Branches) == 1 && len(inputs) == 1 {
				return []string{string(in)}
			}
			views = append(views, fmt.Sprintf("branch %d: %s", b+1, in))
		}
	}
	return views
}
