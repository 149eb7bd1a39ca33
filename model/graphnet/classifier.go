package graphnet

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// Classifier is a graph-filter network, or an ensemble of them, fitted to
// a label of K ≥ 2 classes: a model.Classifier. Its networks are those of
// the same Config as for scores, every layer, branch, screen and dropout
// included, with an output layer of K units whose softmax gives the class
// probabilities; they minimize the weighted mean cross-entropy
//
//	loss = Σ_i w_i·(−log softmax(z_i)_y_i) / Σ_i w_i
//
// over the participants i of a batch, z_i the K outputs (logits) and y_i
// the class of participant i, with w_i = 1 under class_weight "none" and
// w_i = n/(K·n_y_i) under "balanced", n the participants of the training
// part and n_k those of class k there (a class absent from it weighs 1).
// The sum of the weights divides, as in torch.nn.functional.cross_entropy
// with weight and reduction "mean". The inner validation loss, which stops
// training early, is the same weighted mean cross-entropy with the
// weights of the training part. The keys of [model.network.loss] do not
// apply. A screened branch ranks edges by their correlation ratio with
// the class (correlationRatio; for two classes the absolute point-biserial
// correlation), not by their correlation with a score.
//
// With Config.Ensemble = K_e > 1 the Classifier trains K_e networks as an
// Ensemble does (training and validation sets joined and split in K_e
// parts keeping groups whole, member k stopped early on part k, each with
// its own seed), the parts stratified by class (ensemblePartsByClass), and
// predicts the mean of their class probabilities.
// With K_e = 1 it trains one network on the training set and stops it on
// the validation set.
//
// Like a model.Iterative, a Classifier reports its epochs (OnEpoch,
// History); Save writes it and LoadClassifier reads it back. Its edge
// importance is the gradient × input saliency of its decision values
// (EdgeImportance, a model.ReferenceClassInterpreter). It is not safe for
// concurrent use.
type Classifier struct {
	cfg     Config
	p       int
	classes int
	seed    int64
	members []*Network
}

var _ model.Classifier = (*Classifier)(nil)

// NewClassifier returns the classifier of cfg for p regions and a label of
// classes ≥ 2 classes, with weights drawn from seed. It works on a copy of
// cfg with its defaults filled and validates it for this p. For one
// network (cfg.Ensemble = 1) the network has the weights New(cfg, p,
// classes, seed) would give it; for an ensemble the member seeds are those
// of NewEnsemble. The same cfg, p, classes and seed give the same
// weights and, on the same data, the same training.
func NewClassifier(cfg Config, p, classes int, seed int64) (*Classifier, error) {
	if p < 1 || classes < 2 {
		return nil, fmt.Errorf("graphnet: NewClassifier: need p ≥ 1 and classes ≥ 2, found p = %d, classes = %d", p, classes)
	}
	cfg = cfg.clone()
	cfg.SetDefaults()
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	c := &Classifier{cfg: cfg, p: p, classes: classes, seed: seed}
	if *cfg.Ensemble == 1 {
		n, err := newNetwork(cfg, p, classes, classes, seed)
		if err != nil {
			return nil, err
		}
		c.members = []*Network{n}
		return c, nil
	}
	rng := c.rng()
	for range *cfg.Ensemble {
		n, err := newNetwork(cfg, p, classes, classes, rng.Int64())
		if err != nil {
			return nil, err
		}
		c.members = append(c.members, n)
	}
	return c, nil
}

// rng returns the classifier's generator of member seeds and ensemble
// parts, the same as an Ensemble's of the same seed.
func (c *Classifier) rng() *rand.Rand {
	return rand.New(rand.NewPCG(uint64(c.seed), ensembleStream))
}

// Config returns the classifier's configuration, with its defaults filled.
func (c *Classifier) Config() Config { return c.cfg.clone() }

// P returns the number of regions the classifier takes.
func (c *Classifier) P() int { return c.p }

// Classes returns the number of classes K.
func (c *Classifier) Classes() int { return c.classes }

// Members returns the classifier's networks, member 1 first: one unless
// it is an ensemble. They are the classifier's own. Their Predict gives
// the K logits z_i (softmax(z_i) are the class probabilities), and their
// Fit refuses to run: fit them through the Classifier.
func (c *Classifier) Members() []*Network { return slices.Clone(c.members) }

// OnEpoch sets a function called after every epoch of every network in
// the next Fit; for an ensemble with Epoch.Member set to the member's
// number (from 1).
func (c *Classifier) OnEpoch(f func(model.Epoch)) {
	for k, n := range c.members {
		if f == nil || len(c.members) == 1 {
			n.OnEpoch(f)
			continue
		}
		n.OnEpoch(func(ep model.Epoch) {
			ep.Member = k + 1
			f(ep)
		})
	}
}

// History returns the epochs of the last Fit, whose losses are weighted
// mean cross-entropies: those of the network, or of every member of an
// ensemble, member 1 first, each with Epoch.Member set.
func (c *Classifier) History() []model.Epoch {
	if len(c.members) == 1 {
		return c.members[0].History()
	}
	var out []model.Epoch
	for k, n := range c.members {
		for _, ep := range n.History() {
			ep.Member = k + 1
			out = append(out, ep)
		}
	}
	return out
}

// Fit trains the classifier on train, stopping early on valid (see the
// type's documentation and Network.Fit). train.Classes must be the
// classes given to NewClassifier, and so must valid.Classes unless valid
// is empty; every label must be in [0, K). A loss that diverges stops Fit
// with an error wrapping model.ErrDiverged.
func (c *Classifier) Fit(ctx context.Context, train, valid model.LabelledSet) error {
	for _, s := range []struct {
		set  model.LabelledSet
		what string
	}{{train, "training set"}, {valid, "validation set"}} {
		if err := c.check(s.set, s.what); err != nil {
			return err
		}
	}
	if train.Len() == 0 {
		return fmt.Errorf("graphnet: Classifier.Fit: the training set is empty")
	}
	if len(c.members) == 1 {
		return c.members[0].fitLabelled(ctx, train, valid)
	}
	joined := model.LabelledSet{
		Participants: slices.Concat(train.Participants, valid.Participants),
		Classes:      c.classes,
		Labels:       slices.Concat(train.Labels, valid.Labels),
	}
	rng := c.rng()
	for range c.members {
		rng.Int64() // the member seeds
	}
	parts, err := ensemblePartsByClass(joined.Participants, joined.Labels, len(c.members), rng)
	if err != nil {
		return err
	}
	for k, n := range c.members {
		var fitIdx []int
		for j, part := range parts {
			if j != k {
				fitIdx = append(fitIdx, part...)
			}
		}
		slices.Sort(fitIdx)
		if err := n.fitLabelled(ctx, labelledSubset(joined, fitIdx), labelledSubset(joined, parts[k])); err != nil {
			return fmt.Errorf("ensemble member %d of %d: %w", k+1, len(c.members), err)
		}
	}
	return nil
}

// check reports a set whose labels do not fit the classifier.
func (c *Classifier) check(s model.LabelledSet, what string) error {
	if len(s.Labels) != s.Len() {
		return fmt.Errorf("graphnet: Classifier.Fit: %s: %d labels for %d participants", what, len(s.Labels), s.Len())
	}
	if s.Len() > 0 && s.Classes != c.classes {
		return fmt.Errorf("graphnet: Classifier.Fit: %s: a label of %d classes, the classifier has %d", what, s.Classes, c.classes)
	}
	for i, y := range s.Labels {
		if y < 0 || y >= c.classes {
			return fmt.Errorf("graphnet: Classifier.Fit: %s: participant %q: class %d, want a class in [0, %d)", what, s.Participants[i].ID, y, c.classes)
		}
	}
	return nil
}

// labelledSubset returns the participants idx of s with their labels.
func labelledSubset(s model.LabelledSet, idx []int) model.LabelledSet {
	out := model.LabelledSet{Classes: s.Classes, Participants: make([]*data.Participant, len(idx)), Labels: make([]int, len(idx))}
	for j, i := range idx {
		out.Participants[j], out.Labels[j] = s.Participants[i], s.Labels[i]
	}
	return out
}

// PredictProba returns the len(ps) × K class probabilities: softmax of
// the network's outputs, or the mean over an ensemble's members of theirs.
// Every row sums to 1.
func (c *Classifier) PredictProba(ps []*data.Participant) (*mat.Dense, error) {
	var sum *mat.Dense
	for k, n := range c.members {
		logits, err := n.Predict(ps)
		if err != nil {
			if len(c.members) > 1 {
				err = fmt.Errorf("ensemble member %d: %w", k+1, err)
			}
			return nil, err
		}
		softmaxRows(logits)
		if sum == nil {
			sum = logits
			continue
		}
		sum.Add(sum, logits)
	}
	if len(c.members) > 1 {
		sum.Scale(1/float64(len(c.members)), sum)
	}
	return sum, nil
}

// softmaxRows replaces every row z of m by softmax(z)_k = exp(z_k −
// logsumexp(z)).
func softmaxRows(m *mat.Dense) {
	r, _ := m.Dims()
	for i := range r {
		row := m.RawRowView(i)
		lse := logSumExp(row)
		for k, z := range row {
			row[k] = math.Exp(z - lse)
		}
	}
}

// classWeights returns the weight of each of the classes under mode, from
// the labels of the training part: 1 for every class under "none";
// n/(K·n_k) under "balanced" (as scikit-learn's compute_class_weight), n =
// len(labels), n_k the labels of class k, and 1 for a class with no label.
func classWeights(mode ClassWeight, labels []int, classes int) []float64 {
	w := make([]float64, classes)
	counts := make([]int, classes)
	for _, y := range labels {
		counts[y]++
	}
	for k, c := range counts {
		w[k] = 1
		if mode == ClassWeightBalanced && c > 0 {
			w[k] = float64(len(labels)) / float64(classes*c)
		}
	}
	return w
}

// fitLabelled trains a network built for a label (see Classifier) on
// train, stopping early on valid, with class weights from train.
func (n *Network) fitLabelled(ctx context.Context, train, valid model.LabelledSet) error {
	weights := classWeights(n.cfg.ClassWeight, train.Labels, n.classes)
	return n.fit(ctx,
		func() (*prepared, error) { return n.prepareLabelled(train, "training set", weights) },
		func() (*prepared, error) { return n.prepareLabelled(valid, "validation set", weights) })
}

// prepareLabelled prepares the inputs of s as prepare does, with the
// targets of its labels: row i of y is weights[y_i]·onehot(y_i).
func (n *Network) prepareLabelled(s model.LabelledSet, what string, weights []float64) (*prepared, error) {
	set, err := n.prepare(model.Dataset{Participants: s.Participants}, what, false)
	if err != nil {
		return nil, err
	}
	set.labels = slices.Clone(s.Labels)
	set.y = make([]float64, s.Len()*n.classes)
	for i, y := range s.Labels {
		set.y[i*n.classes+y] = weights[y]
	}
	return set, nil
}

// Save writes the classifier to the folder dir, creating it if needed: a
// single network as Network.Save writes it, an ensemble as Ensemble.Save
// does, each manifest.json with the key classes = K (see the package
// documentation). LoadClassifier reads it back.
func (c *Classifier) Save(dir string) error {
	if len(c.members) == 1 {
		return c.members[0].Save(dir)
	}
	return saveEnsemble(dir, ensembleManifest{Format: ensembleFormat, Version: ensembleVersion, Config: c.cfg, P: c.p, Targets: c.classes, Classes: c.classes, Seed: c.seed}, c.members)
}

// LoadClassifier reads a classifier saved by Classifier.Save from the
// folder dir, one network or an ensemble by the format of its
// manifest.json. A model fitted to scores, or a file that Load or
// LoadEnsemble would refuse, gives an error naming the file.
func LoadClassifier(dir string) (*Classifier, error) {
	mpath := filepath.Join(dir, manifestFile)
	raw, err := os.ReadFile(mpath)
	if err != nil {
		return nil, fmt.Errorf("graphnet: LoadClassifier: %w", err)
	}
	var head struct {
		Format string `json:"format"`
	}
	if json.Unmarshal(raw, &head) == nil && head.Format == ensembleFormat {
		m, members, err := readEnsemble(dir)
		if err != nil {
			return nil, err
		}
		if m.Classes == 0 {
			return nil, fmt.Errorf("graphnet: LoadClassifier: %s: an ensemble fitted to scores, not a classifier; read it with LoadEnsemble", mpath)
		}
		c := &Classifier{cfg: m.Config, p: m.P, classes: m.Classes, seed: m.Seed, members: members}
		c.cfg.SetDefaults()
		return c, nil
	}
	n, err := loadNetwork(dir)
	if err != nil {
		return nil, err
	}
	if n.classes == 0 {
		return nil, fmt.Errorf("graphnet: LoadClassifier: %s: a network fitted to scores, not a classifier; read it with Load", mpath)
	}
	return &Classifier{cfg: n.cfg.clone(), p: n.p, classes: n.classes, seed: n.seed, members: []*Network{n}}, nil
}

var _ model.ReferenceClassInterpreter = (*Classifier)(nil)

// EdgeImportance returns the gradient × input saliency of the classifier's
// decision values over ps (model.ClassInterpreter): with z the K logits of
// a network, the decision value is z₁ − z₀, the log-odds of class 1, for
// two classes and z_c − z̄ for class c of K > 2 (z̄ the mean logit), and
//
//	M_vc = (1/n) Σᵢ X_vi ∘ ∂s_ic/∂X_vi
//
// over the n participants of ps, per input view v as Network.EdgeImportance
// defines views and symmetrizes maps; the maps come view after view,
// model.ExplainedClasses(K) per view. Since a saliency is linear in the
// output it differentiates, M_vc is the same difference (or centring) of
// the logits' saliencies. Logits rather than log-probabilities are
// explained: their gradient does not fade where the softmax saturates,
// and for one network they are the decision values of the logistic
// baselines' activation patterns. For an ensemble the maps are the mean of
// the members' maps, as for an Ensemble's scores (the members' logits are
// averaged; their probabilities, which the ensemble predicts, are not
// linear in them).
func (c *Classifier) EdgeImportance(ps []*data.Participant) ([]*mat.Dense, error) {
	return c.EdgeImportanceFrom(ps, nil)
}

// EdgeImportanceFrom is EdgeImportance measured from reference inputs
// (model.ReferenceClassInterpreter; see Network.EdgeImportanceFrom): nil
// ref measures from inputs of 0.
func (c *Classifier) EdgeImportanceFrom(ps, ref []*data.Participant) ([]*mat.Dense, error) {
	K, C := c.classes, model.ExplainedClasses(c.classes)
	var sum []*mat.Dense
	for k, n := range c.members {
		logits, err := n.EdgeImportanceFrom(ps, ref) // view v, logit j at v·K + j
		if err != nil {
			if len(c.members) > 1 {
				err = fmt.Errorf("ensemble member %d: %w", k+1, err)
			}
			return nil, err
		}
		views := len(logits) / K
		maps := make([]*mat.Dense, views*C)
		for v := range views {
			of := logits[v*K : (v+1)*K]
			if K == 2 {
				var m mat.Dense
				m.Sub(of[1], of[0])
				maps[v] = &m
				continue
			}
			var mean mat.Dense
			mean.Scale(0, of[0])
			for _, m := range of {
				mean.Add(&mean, m)
			}
			mean.Scale(1/float64(K), &mean)
			for j, m := range of {
				var centred mat.Dense
				centred.Sub(m, &mean)
				maps[v*C+j] = &centred
			}
		}
		if sum == nil {
			sum = maps
			continue
		}
		for j := range sum {
			sum[j].Add(sum[j], maps[j])
		}
	}
	if len(c.members) > 1 {
		for _, m := range sum {
			m.Scale(1/float64(len(c.members)), m)
		}
	}
	return sum, nil
}
