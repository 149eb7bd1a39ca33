// Package graphnet builds and trains graph-filter networks on gorgonia:
// edge-to-edge, edge-to-node and node-to-graph filters (Kawahara et al.
// 2017), graph convolution over the structural graph (Kipf & Welling 2017),
// two-branch fusion of modalities and a multi-layer perceptron head. A
// Network is a model.Regressor and a model.Iterative; an Ensemble averages
// several. A Classifier is one network or an ensemble fitted to a class
// label (a model.Classifier): K softmax outputs and the (optionally
// class-weighted) cross-entropy. The package registers them as the
// model.Kind "network", configured by Config.
//
// # Architecture
//
// A Config (the [model.network] table of an experiment file) lists one or
// more branches. Each branch takes one p × p matrix per participant — the
// functional matrix F, the structural matrix, or F propagated by the
// participant's structural operator S (S·F or S·F·Sᵀ), or the product
// F∘S of the functional and structural matrices edge by edge — or several of
// them at once as the channels of one C × p × p input (key views), and
// applies its layers in order. A per-edge layer (kind "edge") is a dense
// layer applied to each edge's vector of channel values, its weights
// shared by all edges (a 1 × 1 convolution): placed first in a branch
// with the views functional and structural, it lets the modalities
// interact edge by edge (with the activation, the network can form terms
// such as F_ij·S_ij) before the edge-to-edge and edge-to-node filters;
// the view product gives the network those terms directly, so that even
// its linear layers see the interaction of the modalities at each edge.
// A branch may be screened (key screen): Fit keeps, of each view, only
// the edges most correlated with the training scores and sets the others
// to 0, so that a network can find a truth held by a few edges among
// thousands.
// The branch outputs are flattened and merged by concatenation or
// element-wise product, then pass through the hidden dense layers of the
// head and a linear output layer with one output per target. Every layer
// but dropout and the output is followed by a leaky ReLU. A branch may
// drop entries of its input while training (input_dropout). The output
// layer starts at zero (output_init), so the untrained network predicts
// the training mean of the standardized scores. By default the network
// learns from matrices standardized per edge on its training fold
// (standardize_inputs), each view on its own; the runner fits and saves
// that step (Config.EdgeScaling, train.EdgeScaler), and
// EdgeImportanceFrom keeps the edge importance in raw input units.
// Config.Validate and New check the architecture before any training and
// name the first layer that cannot take its input.
//
// Inputs and structural operators are computed once per participant at
// the start of Fit and Predict. Each batch size has its own expression
// graph, built at first use and reused; all graphs share the weights. The
// package runs a graph's ops itself, in a fixed topological order, and
// every op reuses its output buffers: once a graph has run, a training
// step allocates nothing. A Network spreads its matrix products, element
// loops and optimizer updates over runtime.GOMAXPROCS goroutines (helpers
// that take work when they are idle, so networks trained side by side
// share the cores); the work is cut in pieces fixed by the shapes, so
// results do not depend on the number of cores. With OpenBLAS, leave its
// own threads at one (skein's commands do).
//
// # Training
//
// Fit minimizes the masked loss of LossConfig (a missing score adds
// nothing) with AdamW or SGD with momentum (OptimizerConfig), optional
// clipping of the gradient by its global norm and a per-epoch learning-rate
// schedule. It shuffles the training set every epoch; the last minibatch
// holds the remainder, so every participant counts once per epoch. With a
// validation set it stops early and restores the best weights. The seed of
// New drives the initial weights, the shuffling and the dropout masks, so
// the same seed on the same data gives the same trajectory.
//
// # Labels
//
// NewClassifier builds, from the same Config, networks whose output layer
// has one unit per class of a label; their softmax gives the class
// probabilities and they minimize the mean cross-entropy, each participant
// weighted by its class under class_weight "balanced" (n/(K·n_k) on the
// training part) and the weighted sum divided by the sum of the weights,
// as torch's cross_entropy does. Everything else is as for scores: every
// layer and branch, input and head dropout, edge standardization, early
// stopping on the inner validation loss (the same weighted cross-entropy),
// ensembles (which average the members' probabilities). A screened branch
// ranks edges by their correlation ratio with the class, which orders
// them as the one-way ANOVA F does. The keys of [model.network.loss] do
// not apply to labels (Config.ScoreOnlyKeys). With output_init "zero" the
// untrained classifier gives every class probability 1/K.
//
// # Ensembles
//
// The kind "network" builds an Ensemble of K = Config.Ensemble networks
// (key "ensemble", default 5) when K > 1, and a single Network when K = 1.
// An ensemble's Fit joins the training and the inner validation set and
// splits the joined participants in K parts, deterministically from its
// seed, keeping the participants of one data.Participant.Group in one
// part. Member k trains on the other K − 1 parts, stops early on part k
// and restores its best weights; each member has its own seed. The
// ensemble predicts the mean of its members' predictions, and its edge
// importance is the mean of theirs. Its History lists the epochs of every
// member, each numbered by model.Epoch.Member from 1 with its own epochs
// and Best epoch, so that a learning curve can be drawn per member and a
// sweep can rank by the mean of the members' kept validation losses. Its
// FirstLayerFilters are those of member 1. An ensemble trains about K
// times as long as one network.
//
// # Saved models
//
// Save writes a folder with two files; Load reads it back.
//
// manifest.json is a JSON object with the keys
//
//	format     "skein-graphnet"
//	version    1; Load refuses any other
//	config     the Config, with the keys of the experiment file
//	p          number of regions
//	targets    number of outputs T
//	classes    for a network of a Classifier, the number of classes K =
//	           T (its outputs are the K logits, whose softmax gives the
//	           class probabilities); absent for a network fitted to scores
//	seed       the seed given to New
//	dtype      "float32" or "float64", the type of every weight array
//	operators  per branch, the structural operator kind ("" for none)
//	weights    "weights.npz"
//	arrays     the weight arrays in order: [{"name": …, "shape": […]}, …]
//	history    per epoch of the last Fit: epoch, train_loss,
//	           valid_loss (null without a validation set), best
//	fitted     free-form JSON the caller stored in Network.Fitted, such
//	           as the preprocessing and score scaling it fitted on the
//	           training data (absent when empty)
//	screens    per branch, the edges its screen keeps (key screen of
//	           a branch), as indices c·p² + i·p + j of edge i < j of view
//	           c in increasing order, null for a branch without a screen;
//	           every other edge of the branch's input is set to 0 (absent
//	           when no branch is screened)
//
// weights.npz is a NumPy .npz archive (numpy.load opens it) with one
// C-order array per entry of arrays. For branch b and layer l, the names
// and shapes are, with C input and O output channels, F input and G
// output features:
//
//	branch<b>.layer<l>.row, .col   (O, C, p)  e2e row and column filters Wr, Wc
//	branch<b>.layer<l>.bias        (O)        e2e and e2n bias
//	branch<b>.layer<l>.weight      (O, C, p)  e2n filter
//	branch<b>.layer<l>.weight      (O, C)     edge weights W
//	branch<b>.layer<l>.bias        (O)        edge bias
//	branch<b>.layer<l>.weight      (F, G)     graph_conv and n2g weights
//	branch<b>.layer<l>.bias        (G)        n2g bias
//	head<k>.weight, head<k>.bias   (F, G), (G) hidden head layer k
//	output.weight, output.bias     (F, T), (T) output layer
//
// A dense layer computes y = x·weight + bias with x flattened in C order;
// an edge layer computes H[o,i,j] = Σ_c weight[o,c]·X[c,i,j] + bias[o].
// A branch's input channels are its views in the order of views.
//
// A saved Ensemble is a folder whose manifest.json holds the keys
//
//	format     "skein-graphnet-ensemble"
//	version    1; LoadEnsemble refuses any other
//	config     the Config, ensemble = K
//	p, targets, seed
//	classes    for a Classifier, its number of classes (as for a
//	           network); absent for an Ensemble
//	members    ["member1", …, "memberK"]
//
// and a folder member1 … memberK per member, each a saved network as
// above. The kind's Load reads either by the format of manifest.json, and
// its LoadClassifier (LoadClassifier) either kind of saved Classifier: a
// network or an ensemble whose manifests hold classes. Load and
// LoadEnsemble refuse a saved Classifier, and LoadClassifier a model
// fitted to scores.
//
// This is research software; its predictions are not a diagnosis.
package graphnet
