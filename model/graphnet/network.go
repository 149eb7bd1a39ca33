package graphnet

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"

	"gonum.org/v1/gonum/mat"
	"gorgonia.org/tensor"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/internal/parallel"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/graphnet/internal/ops"
)

// Network is a graph-filter network: a model.Regressor and model.Iterative.
// It is not safe for concurrent use.
type Network struct {
	cfg     Config
	p       int // regions
	targets int // outputs T: the scores, or the K classes of a label
	classes int // K for a network fitted to a label (Classifier), 0 for scores
	seed    int64
	dtype   tensor.Dtype
	arch    arch
	loss    lossFunc
	params  []*param
	rng     *rand.Rand // shuffling and dropout masks
	graphs  map[graphKey]*graph
	history []model.Epoch
	onEpoch func(model.Epoch)
	pool    *parallel.Pool // the ops' and the optimizer's helpers
	// screens holds, per branch, the sorted indices c·p² + i·p + j of the
	// edges i < j its screen keeps (BranchConfig.Screen), set by Fit; nil
	// (for the network or a branch) keeps every edge.
	screens [][]int

	// Fitted is free-form data a caller stores with the network in a
	// saved model, such as what it fitted on the training data
	// (preprocessing, score scaling). The network does not read it.
	Fitted json.RawMessage
}

type graphKey struct {
	batch    int
	training bool
	saliency bool // gradients of the outputs with respect to the inputs
}

// divergenceFactor is how many times its first-epoch value the training
// loss may grow before Fit gives up with model.ErrDiverged.
const divergenceFactor = 1e6

var (
	_ model.Regressor = (*Network)(nil)
	_ model.Iterative = (*Network)(nil)
)

// New returns the network of cfg for p regions and the given number of
// targets, with weights drawn from seed. New works on a copy of cfg with
// its defaults filled and validates it for this p. The same cfg, p, targets
// and seed give the same weights and, on the same data, the same training.
// New builds one network whatever cfg.Ensemble says, and its Config has
// Ensemble = 1; NewEnsemble builds an ensemble.
func New(cfg Config, p, targets int, seed int64) (*Network, error) {
	if p < 1 || targets < 1 {
		return nil, fmt.Errorf("graphnet: New: need p ≥ 1 and targets ≥ 1, found p = %d, targets = %d", p, targets)
	}
	return newNetwork(cfg, p, targets, 0, seed)
}

// newNetwork returns the network of New with the given number of outputs,
// fitted to scores (classes 0) or to a label of classes = outputs classes
// (the cross-entropy loss).
func newNetwork(cfg Config, p, outputs, classes int, seed int64) (*Network, error) {
	targets := outputs
	cfg = cfg.clone()
	cfg.SetDefaults()
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	cfg.Ensemble = new(1)
	a, err := archOf(cfg, p)
	if err != nil {
		return nil, err
	}
	n := &Network{
		cfg: cfg, p: p, targets: targets, classes: classes, seed: seed,
		dtype:  tensor.Float32,
		arch:   a,
		loss:   newLossFunc(cfg.Loss),
		rng:    rand.New(rand.NewPCG(uint64(seed), 0x736b65696e)), // "skein"
		graphs: make(map[graphKey]*graph),
		pool:   parallel.New(runtime.GOMAXPROCS(0) - 1),
	}
	// The helpers stop when the network is no longer reachable (they
	// hold the pool, not the network).
	runtime.AddCleanup(n, (*parallel.Pool).Close, n.pool)
	if classes > 0 {
		n.loss = crossEntropyLoss(classes)
	}
	if cfg.DType == Float64 {
		n.dtype = tensor.Float64
	}
	n.createParams()
	n.initParams(n.rng)
	return n, nil
}

// Config returns the network's configuration, with its defaults filled.
func (n *Network) Config() Config { return n.cfg.clone() }

// P returns the number of regions the network takes.
func (n *Network) P() int { return n.p }

// Targets returns the number of outputs.
func (n *Network) Targets() int { return n.targets }

// OnEpoch sets a function called after every epoch of the next Fit.
func (n *Network) OnEpoch(f func(model.Epoch)) { n.onEpoch = f }

// History returns the epochs of the last Fit.
func (n *Network) History() []model.Epoch { return append([]model.Epoch(nil), n.history...) }

// Fit trains the network from its current weights on train, in minibatches
// of cfg.BatchSize participants shuffled every epoch (the last minibatch
// holds the remainder), for cfg.Epochs epochs. With a non-empty valid set,
// it computes the validation loss after every epoch, stops after
// cfg.Patience epochs without improvement (0: never) and restores the
// weights of the best epoch; a validation set whose scores are all missing
// counts as none. The loss of an epoch is the mean over every
// present score of the epoch. Fit checks ctx between steps and returns its
// error when it is done. A loss that becomes NaN, infinite or more than
// 1e6 times its first-epoch value stops Fit with an error wrapping
// model.ErrDiverged. Y columns must match the targets given to New. A
// branch with a screen (BranchConfig.Screen) has its kept edges chosen
// anew on train at every Fit, before training.
func (n *Network) Fit(ctx context.Context, train, valid model.Dataset) error {
	if n.classes > 0 {
		return fmt.Errorf("graphnet: Fit: the network classifies %d classes; fit it through its Classifier", n.classes)
	}
	if train.Len() == 0 {
		return fmt.Errorf("graphnet: Fit: the training set is empty")
	}
	return n.fit(ctx,
		func() (*prepared, error) { return n.prepare(train, "training set", true) },
		func() (*prepared, error) { return n.prepare(valid, "validation set", true) })
}

// fit trains the network (see Fit) on the sets that train and valid
// prepare. It calls train first, then chooses the screens on the
// training set, then calls valid, which prepare screens as chosen.
func (n *Network) fit(ctx context.Context, train, valid func() (*prepared, error)) error {
	screened := slices.ContainsFunc(n.cfg.Branches, func(b BranchConfig) bool { return b.Screen > 0 })
	if screened {
		n.screens = nil // refitted on this training set
	}
	trainSet, err := train()
	if err != nil {
		return err
	}
	if trainSet.present() == 0 {
		return fmt.Errorf("graphnet: Fit: the training set has no present %s", trainSet.what())
	}
	if screened {
		n.fitScreens(trainSet)
		n.applyScreens(trainSet)
	}
	validSet, err := valid()
	if err != nil {
		return err
	}
	grads := make([]any, len(n.params))
	ws := make([]any, len(n.params))
	for i, p := range n.params {
		ws[i], grads[i] = p.value.Data(), p.grad.Data()
	}
	opt := newOptimizer(n.cfg.Optimizer, ws, grads, n.pool)
	hasValid := validSet.len() > 0 && validSet.present() > 0
	var best []*tensor.Dense
	bestLoss := math.Inf(1)
	sinceBest := 0
	firstLoss := math.NaN()
	n.history = n.history[:0]
	order := make([]int, trainSet.len())
	for i := range order {
		order[i] = i
	}
	for epoch := 1; epoch <= *n.cfg.Epochs; epoch++ {
		rate := rateAt(n.cfg.Optimizer, epoch-1, *n.cfg.Epochs)
		n.rng.Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
		var total, weight float64
		for start := 0; start < len(order); start += *n.cfg.BatchSize {
			if err := ctx.Err(); err != nil {
				return err
			}
			idx := order[start:min(start+*n.cfg.BatchSize, len(order))]
			t, c, err := n.trainStep(trainSet, idx)
			if err != nil {
				return fmt.Errorf("graphnet: epoch %d: %w", epoch, err)
			}
			if math.IsNaN(t) || math.IsInf(t, 0) {
				return fmt.Errorf("graphnet: epoch %d: the training loss is %v: %w", epoch, t, model.ErrDiverged)
			}
			total += t
			weight += c
			opt.step(rate)
		}
		e := model.Epoch{Epoch: epoch, TrainLoss: total / weight, ValidLoss: math.NaN()}
		if epoch == 1 {
			firstLoss = e.TrainLoss
		}
		if e.TrainLoss > divergenceFactor*firstLoss && e.TrainLoss > 1 {
			return fmt.Errorf("graphnet: epoch %d: the training loss %v exceeds %g times that of epoch 1 (%v): %w", epoch, e.TrainLoss, divergenceFactor, firstLoss, model.ErrDiverged)
		}
		if hasValid {
			if e.ValidLoss, err = n.evalLoss(validSet); err != nil {
				return fmt.Errorf("graphnet: epoch %d: validation: %w", epoch, err)
			}
			if math.IsNaN(e.ValidLoss) || math.IsInf(e.ValidLoss, 0) {
				return fmt.Errorf("graphnet: epoch %d: the validation loss is %v: %w", epoch, e.ValidLoss, model.ErrDiverged)
			}
			if e.ValidLoss < bestLoss {
				e.Best = true
				bestLoss = e.ValidLoss
				sinceBest = 0
				best = n.snapshot(best)
			} else {
				sinceBest++
			}
		}
		n.history = append(n.history, e)
		if n.onEpoch != nil {
			n.onEpoch(e)
		}
		if hasValid && *n.cfg.Patience > 0 && sinceBest >= *n.cfg.Patience {
			break
		}
	}
	if best != nil {
		n.restore(best)
	}
	return nil
}

// snapshot copies the weights into dst (allocated when nil) and returns it.
func (n *Network) snapshot(dst []*tensor.Dense) []*tensor.Dense {
	if dst == nil {
		dst = make([]*tensor.Dense, len(n.params))
		for i, p := range n.params {
			dst[i] = p.value.Clone().(*tensor.Dense)
		}
		return dst
	}
	for i, p := range n.params {
		copyDense(dst[i], p.value)
	}
	return dst
}

// restore copies the weights back from a snapshot.
func (n *Network) restore(src []*tensor.Dense) {
	for i, p := range n.params {
		copyDense(p.value, src[i])
	}
}

// copyDense copies the values of src into dst; both are float32 or both
// float64, of the same size.
func copyDense(dst, src *tensor.Dense) {
	if dst.Dtype() == tensor.Float64 {
		copy(dst.Float64s(), src.Float64s())
		return
	}
	copy(dst.Float32s(), src.Float32s())
}

// trainStep runs forward and backward on the participants idx of set,
// leaving the gradients in the params, and returns the summed loss terms and
// their total weight (the number of present scores of the batch, or the
// summed weights of its labels).
func (n *Network) trainStep(set *prepared, idx []int) (total, weight float64, err error) {
	g, err := n.graph(len(idx), true)
	if err != nil {
		return 0, 0, err
	}
	set.fill(g, idx)
	for i, m := range g.masks {
		if err := ops.FillMask(m, g.rates[i], n.rng); err != nil {
			return 0, 0, err
		}
	}
	if err := g.m.run(); err != nil {
		return 0, 0, err
	}
	for i, p := range n.params {
		copyDense(p.grad, g.m.dense(g.grads[i]))
	}
	t, c := batchLoss(n.loss, g.m.dense(g.pred), g.target)
	return t, c, nil
}

// batchLoss returns the summed loss terms of pred against target and the
// number of present targets (see sum).
func batchLoss(f lossFunc, pred, target *tensor.Dense) (total, weight float64) {
	if pred.Dtype() == tensor.Float64 {
		return sum(f, pred.Float64s(), target.Float64s())
	}
	return sum(f, pred.Float32s(), target.Float32s())
}

// evalLoss returns the loss of the network over all of set, without dropout:
// the mean over every present score (the weighted mean cross-entropy over
// every label).
func (n *Network) evalLoss(set *prepared) (float64, error) {
	var total, weight float64
	err := n.forEachBatch(set, func(g *graph, idx []int) {
		t, w := batchLoss(n.loss, g.m.dense(g.pred), g.target)
		total += t
		weight += w
	})
	if err != nil || weight == 0 {
		return 0, err
	}
	return total / weight, nil
}

// forEachBatch runs the evaluation graph over set in order, in batches of
// cfg.BatchSize and a remainder, calling f after each run.
func (n *Network) forEachBatch(set *prepared, f func(g *graph, idx []int)) error {
	all := make([]int, set.len())
	for i := range all {
		all[i] = i
	}
	for start := 0; start < len(all); start += *n.cfg.BatchSize {
		idx := all[start:min(start+*n.cfg.BatchSize, len(all))]
		g, err := n.graph(len(idx), false)
		if err != nil {
			return err
		}
		set.fill(g, idx)
		if err := g.m.run(); err != nil {
			return err
		}
		f(g, idx)
	}
	return nil
}

// Predict returns the len(ps) × T predictions of the network, without
// dropout, on the scale of the Y it was fitted on. For a network of a
// Classifier they are the K logits, whose softmax gives the class
// probabilities (Classifier.PredictProba).
func (n *Network) Predict(ps []*data.Participant) (*mat.Dense, error) {
	if len(ps) == 0 {
		return nil, fmt.Errorf("graphnet: Predict: no participants")
	}
	set, err := n.prepare(model.Dataset{Participants: ps}, "prediction set", false)
	if err != nil {
		return nil, err
	}
	out := mat.NewDense(len(ps), n.targets, nil)
	err = n.forEachBatch(set, func(g *graph, idx []int) {
		pred := g.m.dense(g.pred)
		for k, i := range idx {
			for t := range n.targets {
				out.Set(i, t, valueAt(pred, k*n.targets+t))
			}
		}
	})
	if err != nil {
		return nil, fmt.Errorf("graphnet: Predict: %w", err)
	}
	return out, nil
}

// graph returns the expression graph for a batch size, building it on
// first use.
func (n *Network) graph(batch int, training bool) (*graph, error) {
	key := graphKey{batch: batch, training: training}
	if g, ok := n.graphs[key]; ok {
		return g, nil
	}
	g, err := n.build(batch, training, false)
	if err != nil {
		return nil, err
	}
	n.graphs[key] = g
	return g, nil
}

// prepared holds a dataset's inputs as the network reads them: the input
// signal and the structural operator of every branch for every
// participant, computed once, and the scores.
type prepared struct {
	p, targets int
	inputs     [][][]float64 // [branch][participant] C×p×p (C views), row-major
	operators  [][][]float64 // [branch][participant] p×p, nil without operator
	// y is participant-major n×T, NaN = missing; nil when predicting.
	// For a label (T = K classes), row i is w_i·onehot(labels[i]).
	y []float64
	// labels holds each participant's class for a label, nil for scores.
	labels []int
	n      int
}

func (s *prepared) len() int { return s.n }

// what names the targets of s in errors: "score" or "label".
func (s *prepared) what() string {
	if s.labels != nil {
		return "label"
	}
	return "score"
}

func (s *prepared) present() int {
	c := 0
	for _, v := range s.y {
		if !math.IsNaN(v) {
			c++
		}
	}
	return c
}

// prepare checks a dataset and computes every branch's input and operator
// for its participants once. what names the dataset in errors; needY says
// whether it must have scores.
func (n *Network) prepare(d model.Dataset, what string, needY bool) (*prepared, error) {
	s := &prepared{p: n.p, targets: n.targets, n: d.Len()}
	if d.Y != nil {
		r, c := d.Y.Dims()
		if r != d.Len() || c != n.targets {
			return nil, fmt.Errorf("graphnet: %s: Y is %d×%d, want %d×%d (participants × targets)", what, r, c, d.Len(), n.targets)
		}
		s.y = make([]float64, 0, r*c)
		for i := range r {
			s.y = append(s.y, d.Y.RawRowView(i)...)
		}
	} else if d.Len() > 0 && needY {
		return nil, fmt.Errorf("graphnet: %s: no scores (Y is nil)", what)
	}
	for bi, b := range n.cfg.Branches {
		var kind data.OperatorKind
		if b.needsOperator() {
			kind = b.Operator
		}
		in := make([][]float64, d.Len())
		var opers [][]float64 // kept only for graph convolutions, which read it at every step
		if kind != "" && b.hasGraphConv() {
			opers = make([][]float64, d.Len())
		}
		for i, pt := range d.Participants {
			x, op, err := n.branchInput(b, kind, pt)
			if err != nil {
				return nil, fmt.Errorf("graphnet: %s: participant %q: model.network.branch[%d]: %w", what, pt.ID, bi, err)
			}
			in[i] = x
			if opers != nil {
				opers[i] = op
			}
		}
		s.inputs = append(s.inputs, in)
		s.operators = append(s.operators, opers)
	}
	n.applyScreens(s)
	return s, nil
}

// branchInput returns a participant's input for branch b, C×p×p
// row-major with one p×p channel per view, and, when kind is set, its
// structural operator, p×p row-major.
func (n *Network) branchInput(b BranchConfig, kind data.OperatorKind, pt *data.Participant) (x, s []float64, err error) {
	var view Input
	check := func(m *mat.Dense, name string) error {
		if m == nil {
			return fmt.Errorf("input %q needs the %s matrix, which the participant does not have", view, name)
		}
		if r, c := m.Dims(); r != n.p || c != n.p {
			return fmt.Errorf("the %s matrix is %d×%d, want %d×%d", name, r, c, n.p, n.p)
		}
		return nil
	}
	// A compact participant (cohort.storage = "float32") has its
	// matrices widened to float64 here, once per dataset.
	fm, sm := pt.FunctionalMatrix(), pt.StructuralMatrix()
	var op *mat.Dense
	if kind != "" {
		if err := check(sm, "structural"); err != nil {
			return nil, nil, fmt.Errorf("operator %q: %w", kind, err)
		}
		if op, err = data.Operator(kind, sm); err != nil {
			return nil, nil, fmt.Errorf("operator %q: %w", kind, err)
		}
		s = flatView(op)
	}
	views := b.views()
	if len(views) > 1 {
		x = make([]float64, 0, len(views)*n.p*n.p)
	}
	for _, view = range views {
		var m *mat.Dense
		switch view {
		case InputStructural:
			if err := check(sm, "structural"); err != nil {
				return nil, nil, err
			}
			m = sm
		case InputFunctional:
			if err := check(fm, "functional"); err != nil {
				return nil, nil, err
			}
			m = fm
		case InputPropagated:
			if err := check(fm, "functional"); err != nil {
				return nil, nil, err
			}
			var sf mat.Dense
			sf.Mul(op, fm)
			if b.Propagate == PropagateBoth {
				sf.Mul(&sf, op.T())
			}
			m = &sf
		case InputProduct:
			if err := check(fm, "functional"); err != nil {
				return nil, nil, err
			}
			if err := check(sm, "structural"); err != nil {
				return nil, nil, err
			}
			var fs mat.Dense
			fs.MulElem(fm, sm)
			m = &fs
		}
		v := flatView(m)
		for _, e := range v {
			if math.IsNaN(e) || math.IsInf(e, 0) {
				return nil, nil, fmt.Errorf("input %q holds %v; the network needs finite values", view, e)
			}
		}
		if len(views) == 1 {
			return v, s, nil
		}
		x = append(x, v...)
	}
	return x, s, nil
}

// flatView returns the row-major elements of m: its backing slice when
// the rows are contiguous, else a copy. The caller must not modify it.
func flatView(m *mat.Dense) []float64 {
	r, c := m.Dims()
	if raw := m.RawMatrix(); raw.Stride == c {
		return raw.Data[:r*c]
	}
	out := make([]float64, 0, r*c)
	for i := range r {
		out = append(out, m.RawRowView(i)[:c]...)
	}
	return out
}

// fill copies the participants idx of s into the graph's inputs, operators
// and targets.
func (s *prepared) fill(g *graph, idx []int) {
	pp := s.p * s.p
	for bi := range g.inputs {
		for k, i := range idx {
			x := s.inputs[bi][i]
			copyInto(g.inputs[bi], k*len(x), x)
			if g.operators[bi] != nil {
				copyInto(g.operators[bi], k*pp, s.operators[bi][i])
			}
		}
	}
	nan := math.NaN()
	for k, i := range idx {
		if s.y == nil {
			fillValue(g.target, k*s.targets, s.targets, nan)
			continue
		}
		copyInto(g.target, k*s.targets, s.y[i*s.targets:(i+1)*s.targets])
	}
}

// copyInto sets the values off, off+1, … of dst (float32 or float64) to
// src.
func copyInto(dst *tensor.Dense, off int, src []float64) {
	if dst.Dtype() == tensor.Float64 {
		copy(dst.Float64s()[off:], src)
		return
	}
	d := dst.Float32s()[off : off+len(src)]
	for i, v := range src {
		d[i] = float32(v)
	}
}

// fillValue sets the values off to off+n−1 of dst (float32 or float64) to v.
func fillValue(dst *tensor.Dense, off, n int, v float64) {
	if dst.Dtype() == tensor.Float64 {
		d := dst.Float64s()[off : off+n]
		for i := range d {
			d[i] = v
		}
		return
	}
	d := dst.Float32s()[off : off+n]
	for i := range d {
		d[i] = float32(v)
	}
}

// valueAt returns value i of t (float32 or float64) as a float64.
func valueAt(t *tensor.Dense, i int) float64 {
	if t.Dtype() == tensor.Float64 {
		return t.Float64s()[i]
	}
	return float64(t.Float32s()[i])
}
