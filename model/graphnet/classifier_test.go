package graphnet

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// crossEntropyFixture is testdata/crossentropy.json, written by
// testdata/make_crossentropy.py from torch, scikit-learn and numpy.
type crossEntropyFixture struct {
	Cases []struct {
		Name   string
		Logits [][]float64
		Labels []int
		Weight []float64
		Loss   float64
		Grad   [][]float64
	}
	ClassWeight []struct {
		Labels   []int
		Classes  int
		Balanced []float64
	} `json:"class_weight"`
	Anova []struct {
		X       [][]float64
		Labels  []int
		Classes int
		F       []float64
	}
}

func readCrossEntropyFixture(t *testing.T) crossEntropyFixture {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("testdata", "crossentropy.json"))
	if err != nil {
		t.Fatal(err)
	}
	var f crossEntropyFixture
	if err := json.Unmarshal(raw, &f); err != nil {
		t.Fatal(err)
	}
	return f
}

// within reports whether got is within tol of want, relative to |want|
// when |want| > 1.
func within(got, want, tol float64) bool {
	return math.Abs(got-want) <= tol*math.Max(1, math.Abs(want))
}

// TestCrossEntropyTorch checks the loss and its gradient with respect to
// the logits against torch.nn.functional.cross_entropy (reduction "mean",
// with and without weight) and torch.autograd, in float64
// (testdata/make_crossentropy.py).
func TestCrossEntropyTorch(t *testing.T) {
	fx := readCrossEntropyFixture(t)
	var worstLoss, worstGrad, worst32 float64
	for _, c := range fx.Cases {
		t.Run(c.Name, func(t *testing.T) {
			K := len(c.Logits[0])
			f := crossEntropyLoss(K)
			var z, target []float64
			for i, row := range c.Logits {
				z = append(z, row...)
				onehot := make([]float64, K)
				onehot[c.Labels[i]] = 1
				if c.Weight != nil {
					onehot[c.Labels[i]] = c.Weight[c.Labels[i]]
				}
				target = append(target, onehot...)
			}
			// torch.nn.functional.cross_entropy: the weighted mean loss.
			if got := f.mean(z, target); !within(got, c.Loss, 1e-12) {
				t.Errorf("loss = %.17g, torch %.17g", got, c.Loss)
			} else {
				worstLoss = math.Max(worstLoss, math.Abs(got-c.Loss))
			}
			// torch.autograd: the gradient with respect to the logits.
			grad := make([]float64, len(z))
			lossGrad(f, 1, z, target, grad)
			for i, row := range c.Grad {
				for k, want := range row {
					if got := grad[i*K+k]; !within(got, want, 1e-12) {
						t.Errorf("gradient[%d][%d] = %.17g, torch %.17g", i, k, got, want)
					} else {
						worstGrad = math.Max(worstGrad, math.Abs(got-want))
					}
				}
			}
			// In float32, as a network of dtype float32 runs it: the loss is
			// accumulated in float64 from the float32 logits, so it differs
			// from torch's by the rounding of the logits to float32, at most
			// |z|·2⁻²⁴ each, which moves the loss and every gradient entry
			// by at most about max|z|·2⁻²⁴ (both are 1-Lipschitz in each
			// logit up to the weights' ratio, here at most 4); the
			// tolerance is 4 times that.
			maxZ := 1.0
			z32 := make([]float32, len(z))
			t32 := make([]float32, len(target))
			for i := range z {
				z32[i], t32[i] = float32(z[i]), float32(target[i])
				maxZ = math.Max(maxZ, math.Abs(z[i]))
			}
			tol32 := 4 * 4 * maxZ * math.Pow(2, -24)
			if total, weight := sum(f, z32, t32); math.Abs(total/weight-c.Loss) > tol32 {
				t.Errorf("float32 loss = %.9g, torch %.17g, beyond %.3g", total/weight, c.Loss, tol32)
			} else {
				worst32 = math.Max(worst32, math.Abs(total/weight-c.Loss))
			}
			g32 := make([]float32, len(z))
			lossGrad(f, 1, z32, t32, g32)
			for i, row := range c.Grad {
				for k, want := range row {
					if d := math.Abs(float64(g32[i*K+k]) - want); d > tol32 {
						t.Errorf("float32 gradient[%d][%d] = %.9g, torch %.17g, beyond %.3g", i, k, g32[i*K+k], want, tol32)
					} else {
						worst32 = math.Max(worst32, d)
					}
				}
			}
			// A missing label (a row of NaN) adds nothing and gets no gradient.
			nan := math.NaN()
			zm := append(append([]float64(nil), z...), make([]float64, K)...)
			tm := append(append([]float64(nil), target...), make([]float64, K)...)
			for k := range K {
				zm[len(z)+k], tm[len(z)+k] = 3*float64(k), nan
			}
			if got := f.mean(zm, tm); !within(got, c.Loss, 1e-12) {
				t.Errorf("with a missing label: loss = %.17g, torch %.17g", got, c.Loss)
			}
			gm := make([]float64, len(zm))
			lossGrad(f, 1, zm, tm, gm)
			for k := range K {
				if gm[len(z)+k] != 0 {
					t.Errorf("with a missing label: its gradient is %v, want 0", gm[len(z):])
				}
			}
		})
	}
	t.Logf("max |difference| from torch: loss %.3g, gradient %.3g; in float32, %.3g", worstLoss, worstGrad, worst32)
}

// TestClassWeights checks "balanced" against scikit-learn's
// compute_class_weight("balanced") (testdata/make_crossentropy.py), and
// "none".
func TestClassWeights(t *testing.T) {
	fx := readCrossEntropyFixture(t)
	for _, c := range fx.ClassWeight {
		got := classWeights(ClassWeightBalanced, c.Labels, c.Classes)
		for k, want := range c.Balanced {
			if !within(got[k], want, 1e-15) {
				t.Errorf("labels %v: balanced weight of class %d = %v, scikit-learn %v", c.Labels, k, got[k], want)
			}
		}
		for k, w := range classWeights(ClassWeightNone, c.Labels, c.Classes) {
			if w != 1 {
				t.Errorf("labels %v: weight of class %d under none = %v, want 1", c.Labels, k, w)
			}
		}
	}
	// A class absent from the training part weighs 1 (our convention).
	if got := classWeights(ClassWeightBalanced, []int{0, 0, 1}, 3); got[2] != 1 || !within(got[0], 3.0/6, 1e-15) {
		t.Errorf("weights with an absent class = %v, want [0.5 1 1]", got)
	}
}

// TestCorrelationRatioANOVA checks the correlation ratio η of the label
// screens against the one-way ANOVA F of scikit-learn's f_classif
// (testdata/make_crossentropy.py), through F = (η²/(K − 1)) / ((1 −
// η²)/(n − K)).
func TestCorrelationRatioANOVA(t *testing.T) {
	fx := readCrossEntropyFixture(t)
	for _, c := range fx.Anova {
		n, K := float64(len(c.Labels)), float64(c.Classes)
		for j, want := range c.F {
			x := make([]float64, len(c.X))
			for i := range x {
				x[i] = c.X[i][j]
			}
			eta := correlationRatio(x, c.Labels, c.Classes)
			got := (eta * eta / (K - 1)) / ((1 - eta*eta) / (n - K))
			if !within(got, want, 1e-12) {
				t.Errorf("%d classes, column %d: F from η = %.17g, scikit-learn f_classif %.17g", c.Classes, j, got, want)
			}
		}
	}
}

// labelledCohort is plantedCohort with the latent score cut into classes:
// class 1 when the observed score is above 0 (two classes), or the score
// cut at ±0.5 (three classes).
func labelledCohort(n, p, classes int, noise float64, seed uint64) model.LabelledSet {
	ps, y := plantedCohort(n, p, noise, seed)
	s := model.LabelledSet{Participants: ps, Classes: classes, Labels: make([]int, n)}
	for i := range n {
		v := y.At(i, 0)
		switch {
		case classes == 2 && v > 0:
			s.Labels[i] = 1
		case classes == 3 && v > 0.5:
			s.Labels[i] = 2
		case classes == 3 && v > -0.5:
			s.Labels[i] = 1
		}
	}
	return s
}

// TestClassifierGradientFiniteDifference checks the gradient of the
// cross-entropy, with and without class weights, through whole networks
// in float64 against central finite differences of the loss (the standard
// gradient check, e.g. Goodfellow, Bengio & Courville 2016, Deep
// Learning, §11.5; common practice), as TestGradientFiniteDifference does
// for scores.
func TestClassifierGradientFiniteDifference(t *testing.T) {
	tests := []struct {
		name    string
		classes int
		weight  ClassWeight
		cfg     Config
		head    []int
	}{
		{"two classes, none", 2, ClassWeightNone, testConfig("float64", BranchConfig{Layers: layers(e2e(2), e2n(3), n2g(4))}), nil},
		{"two classes, balanced, head", 2, ClassWeightBalanced, testConfig("float64", BranchConfig{Layers: layers(e2n(3), n2g(4))}), []int{5}},
		{"three classes, balanced, two branches", 3, ClassWeightBalanced, testConfig("float64",
			BranchConfig{Views: []Input{InputFunctional, InputStructural}, Layers: layers(edge(2), e2n(3), n2g(4))},
			BranchConfig{Input: "propagated", Operator: "renormalized-adjacency", Layers: layers(gconv(3), n2g(4))}), nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			const p, n = 6, 7
			cfg := tt.cfg
			cfg.ClassWeight = tt.weight
			cfg.OutputInit = OutputRandom // every layer gets a gradient
			cfg.Head = tt.head
			set := labelledCohort(n, p, tt.classes, 0.3, 8)
			set.Labels[0], set.Labels[1] = 0, 1 // two classes present at least
			net, err := newNetwork(cfg, p, tt.classes, tt.classes, 13)
			if err != nil {
				t.Fatal(err)
			}
			// Biases start at 0, where an edge layer meets the leaky
			// ReLU's kink on the zero diagonal: no derivative there for
			// finite differences to approximate. Move them off it.
			rng := rand.New(rand.NewPCG(2, 2))
			for _, prm := range net.params {
				if prm.fanIn == 0 {
					for i, ws := 0, prm.value.Data().([]float64); i < len(ws); i++ {
						ws[i] = 0.1 * rng.NormFloat64()
					}
				}
			}
			w := classWeights(tt.weight, set.Labels, tt.classes)
			prep, err := net.prepareLabelled(set, "test", w)
			if err != nil {
				t.Fatal(err)
			}
			all := make([]int, n)
			for i := range all {
				all[i] = i
			}
			if _, _, err := net.trainStep(prep, all); err != nil {
				t.Fatal(err)
			}
			*net.cfg.BatchSize = n // evalLoss in one batch, like the step
			lossAt := func() float64 {
				l, err := net.evalLoss(prep)
				if err != nil {
					t.Fatal(err)
				}
				return l
			}
			var worst float64
			for _, prm := range net.params {
				ws := prm.value.Data().([]float64)
				g := prm.grad.Data().([]float64)
				var diff, norm float64
				for i := range ws {
					const h = 1e-6
					orig := ws[i]
					ws[i] = orig + h
					up := lossAt()
					ws[i] = orig - h
					down := lossAt()
					ws[i] = orig
					fd := (up - down) / (2 * h)
					diff += (fd - g[i]) * (fd - g[i])
					norm += math.Max(fd*fd, g[i]*g[i])
				}
				if norm == 0 {
					continue
				}
				rel := math.Sqrt(diff / norm)
				worst = math.Max(worst, rel)
				if rel > 1e-6 {
					t.Errorf("%s: relative error %.3g between gradient and finite differences", prm.name, rel)
				}
			}
			t.Logf("largest relative error over the weight arrays: %.3g", worst)
		})
	}
}

// classifierConfig is a small fast network for the training tests.
func classifierConfig(ensemble int) Config {
	c := Config{
		Branches:  []BranchConfig{{Layers: layers(e2n(4), n2g(8))}},
		Epochs:    new(60),
		BatchSize: new(16),
		Patience:  new(15),
		Ensemble:  new(ensemble),
		Optimizer: OptimizerConfig{Rate: new(1e-2)},
	}
	c.SetDefaults()
	return c
}

// accuracy returns the share of ps whose most probable class is their
// label.
func accuracy(proba *mat.Dense, labels []int) float64 {
	right := 0
	for i, y := range labels {
		row := proba.RawRowView(i)
		best := 0
		for k := range row {
			if row[k] > row[best] {
				best = k
			}
		}
		if best == y {
			right++
		}
	}
	return float64(right) / float64(len(labels))
}

// TestClassifierLearns trains on an invented cohort whose class is carried
// by a planted pattern of the functional matrix (plantedCohort): held-out
// accuracy must be well above chance; with the training labels shuffled
// (a null cohort) it must be near chance. The bounds are ours: chance is
// 1/2 here, and 100 held-out participants give a binomial SD of 0.05.
func TestClassifierLearns(t *testing.T) {
	const p = 8
	all := labelledCohort(200, p, 2, 0.2, 21)
	train, valid, test := labelledSubset(all, seq(0, 80)), labelledSubset(all, seq(80, 100)), labelledSubset(all, seq(100, 200))
	null := func(s model.LabelledSet, seed uint64) model.LabelledSet {
		s.Labels = append([]int(nil), s.Labels...)
		rand.New(rand.NewPCG(seed, 2)).Shuffle(len(s.Labels), func(i, j int) { s.Labels[i], s.Labels[j] = s.Labels[j], s.Labels[i] })
		return s
	}
	tests := []struct {
		name         string
		ensemble     int
		weight       ClassWeight
		train, valid model.LabelledSet
		lo, hi       float64
	}{
		{"planted", 1, ClassWeightNone, train, valid, 0.8, 1},
		{"planted, balanced, ensemble of 2", 2, ClassWeightBalanced, train, valid, 0.8, 1},
		{"null (shuffled labels)", 1, ClassWeightNone, null(train, 1), null(valid, 2), 0.35, 0.65},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			cfg := classifierConfig(tt.ensemble)
			cfg.ClassWeight = tt.weight
			c, err := NewClassifier(cfg, p, 2, 3)
			if err != nil {
				t.Fatal(err)
			}
			if err := c.Fit(context.Background(), tt.train, tt.valid); err != nil {
				t.Fatal(err)
			}
			proba, err := c.PredictProba(test.Participants)
			if err != nil {
				t.Fatal(err)
			}
			for i := range test.Len() {
				if s := mat.Sum(proba.RowView(i)); math.Abs(s-1) > 1e-6 {
					t.Fatalf("row %d of the probabilities sums to %v", i, s)
				}
			}
			acc := accuracy(proba, test.Labels)
			t.Logf("held-out accuracy %.2f", acc)
			if acc < tt.lo || acc > tt.hi {
				t.Errorf("held-out accuracy %.2f, want it in [%.2f, %.2f]", acc, tt.lo, tt.hi)
			}
			if h := c.History(); len(h) == 0 || math.IsNaN(h[0].ValidLoss) {
				t.Errorf("history %v: want epochs with validation losses", h)
			}
		})
	}
}

// seq returns from, from+1, …, to−1.
func seq(from, to int) []int {
	out := make([]int, 0, to-from)
	for i := from; i < to; i++ {
		out = append(out, i)
	}
	return out
}

// TestClassifierScreen checks that a screened branch of a classifier
// keeps the edge whose value differs between the classes.
func TestClassifierScreen(t *testing.T) {
	const p, n = 5, 30
	rng := rand.New(rand.NewPCG(4, 4))
	set := model.LabelledSet{Classes: 3, Labels: make([]int, n)}
	for i := range n {
		set.Labels[i] = i % 3
		f := mat.NewDense(p, p, nil)
		for a := range p {
			for b := a + 1; b < p; b++ {
				v := rng.NormFloat64()
				if a == 1 && b == 3 {
					v += 3 * float64(set.Labels[i]) // the edge (1, 3) carries the class
				}
				f.Set(a, b, v)
				f.Set(b, a, v)
			}
		}
		set.Participants = append(set.Participants, &data.Participant{ID: "sub-" + string(rune('a'+i)), Functional: f})
	}
	cfg := classifierConfig(1)
	cfg.Branches[0].Screen = 1
	cfg.Epochs = new(1)
	c, err := NewClassifier(cfg, p, 3, 1)
	if err != nil {
		t.Fatal(err)
	}
	if err := c.Fit(context.Background(), set, model.LabelledSet{}); err != nil {
		t.Fatal(err)
	}
	if got := c.members[0].screens[0]; len(got) != 1 || got[0] != 1*p+3 {
		t.Errorf("screen keeps %v, want [%d] (edge 1–3)", got, 1*p+3)
	}
}

func TestClassifierSaveLoad(t *testing.T) {
	const p = 6
	all := labelledCohort(24, p, 3, 0.3, 5)
	for _, tt := range []struct {
		dtype    DType
		ensemble int
	}{{Float32, 1}, {Float64, 1}, {Float32, 2}} {
		cfg := classifierConfig(tt.ensemble)
		cfg.DType = tt.dtype
		cfg.Epochs = new(3)
		c, err := NewClassifier(cfg, p, 3, 9)
		if err != nil {
			t.Fatal(err)
		}
		if err := c.Fit(context.Background(), labelledSubset(all, seq(0, 18)), labelledSubset(all, seq(18, 24))); err != nil {
			t.Fatal(err)
		}
		dir := t.TempDir()
		if err := c.Save(dir); err != nil {
			t.Fatal(err)
		}
		kind, err := model.Lookup("network")
		if err != nil {
			t.Fatal(err)
		}
		back, err := kind.LoadClassifier(dir)
		if err != nil {
			t.Fatal(err)
		}
		want, _ := c.PredictProba(all.Participants)
		got, err := back.PredictProba(all.Participants)
		if err != nil {
			t.Fatal(err)
		}
		if !mat.Equal(got, want) {
			t.Errorf("%s, ensemble %d: probabilities differ after Save and LoadClassifier", tt.dtype, tt.ensemble)
		}
		if _, err := kind.Load(dir); err == nil || !strings.Contains(err.Error(), "LoadClassifier") {
			t.Errorf("%s, ensemble %d: the regressors' Load of a classifier: error %v, want one naming LoadClassifier", tt.dtype, tt.ensemble, err)
		}
	}
	// A network fitted to scores is not a classifier.
	net, err := New(testConfig(Float64, BranchConfig{Layers: layers(e2n(2), n2g(3))}), p, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := net.Save(dir); err != nil {
		t.Fatal(err)
	}
	if _, err := LoadClassifier(dir); err == nil || !strings.Contains(err.Error(), "fitted to scores") {
		t.Errorf("LoadClassifier of a regressor: error %v, want one saying it is fitted to scores", err)
	}
}

func TestClassifierErrors(t *testing.T) {
	const p = 6
	set := labelledCohort(10, p, 2, 0.3, 5)
	kind, err := model.Lookup("network")
	if err != nil {
		t.Fatal(err)
	}
	cfg := classifierConfig(1)
	c, err := kind.NewClassifier(&cfg, p, 2, 1)
	if err != nil {
		t.Fatal(err)
	}
	bad := set
	bad.Labels = append([]int(nil), set.Labels...)
	bad.Labels[3] = 2
	tests := []struct {
		name         string
		train, valid model.LabelledSet
		want         string
	}{
		{"class out of range", bad, model.LabelledSet{}, `participant "sub-004": class 2`},
		{"other classes", model.LabelledSet{Participants: set.Participants, Classes: 3, Labels: set.Labels}, model.LabelledSet{}, "3 classes"},
		{"labels length", model.LabelledSet{Participants: set.Participants, Classes: 2, Labels: set.Labels[:4]}, model.LabelledSet{}, "4 labels for 10"},
		{"empty", model.LabelledSet{}, model.LabelledSet{}, "empty"},
	}
	for _, tt := range tests {
		if err := c.Fit(context.Background(), tt.train, tt.valid); err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: error %v, want one containing %q", tt.name, err, tt.want)
		}
	}
	if _, err := NewClassifier(cfg, p, 1, 1); err == nil {
		t.Error("NewClassifier with 1 class: no error")
	}
	cfg.ClassWeight = "inverse"
	if err := cfg.Validate(); err == nil || !strings.Contains(err.Error(), "model.network.class_weight") {
		t.Errorf("class_weight inverse: error %v, want one naming model.network.class_weight", err)
	}
	// A classifier's network does not fit scores.
	net := c.(*Classifier).Members()[0]
	ps, y := plantedCohort(4, p, 0.3, 1)
	if err := net.Fit(context.Background(), dataset(ps, y, 0, 4), model.Dataset{}); err == nil || !strings.Contains(err.Error(), "Classifier") {
		t.Errorf("Fit of a classifier's network: error %v", err)
	}
}
