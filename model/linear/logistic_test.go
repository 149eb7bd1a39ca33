package linear

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// logisticFixture is testdata/logistic.json, written by
// testdata/make_logistic.py with scikit-learn 1.2 (see the script for each
// reference).
type logisticFixture struct {
	Fits []struct {
		Name        string      `json:"name"`
		Classes     int         `json:"classes"`
		Edges       [][]float64 `json:"edges"`
		Labels      []int       `json:"labels"`
		Train       []int       `json:"train"`
		Test        []int       `json:"test"`
		C           float64     `json:"c"`
		ClassWeight ClassWeight `json:"class_weight"`
		Standardize string      `json:"standardize"`
		Coef        [][]float64 `json:"coef"`
		Intercept   []float64   `json:"intercept"`
		Proba       [][]float64 `json:"proba"`
		SolverGap   float64     `json:"solver_gap"`
	} `json:"fits"`
	CV []struct {
		Name        string      `json:"name"`
		Classes     int         `json:"classes"`
		Edges       [][]float64 `json:"edges"`
		Labels      []int       `json:"labels"`
		Folds       []int       `json:"folds"`
		Cs          []float64   `json:"cs"`
		ClassWeight ClassWeight `json:"class_weight"`
		MeanLogLoss []float64   `json:"mean_log_loss"`
		BestC       float64     `json:"best_c"`
	} `json:"cv"`
	Kernel []struct {
		Name      string      `json:"name"`
		Classes   int         `json:"classes"`
		Edges     [][]float64 `json:"edges"`
		Labels    []int       `json:"labels"`
		Train     []int       `json:"train"`
		Test      []int       `json:"test"`
		Lambda    float64     `json:"lambda"`
		Coef      [][]float64 `json:"coef"`
		Intercept []float64   `json:"intercept"`
		Proba     [][]float64 `json:"proba"`
	} `json:"kernel"`
	Majority struct {
		Labels  []int     `json:"labels"`
		Classes int       `json:"classes"`
		Proba   []float64 `json:"proba"`
	} `json:"majority"`
}

func readLogisticFixture(t *testing.T) logisticFixture {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("testdata", "logistic.json"))
	if err != nil {
		t.Fatal(err)
	}
	var f logisticFixture
	if err := json.Unmarshal(raw, &f); err != nil {
		t.Fatalf("testdata/logistic.json: %v", err)
	}
	return f
}

// edgeParticipants makes one participant per edge vector, whose
// functional matrix has those edges (in the order of Edges) above and
// below a zero diagonal.
func edgeParticipants(edges [][]float64) []*data.Participant {
	d := len(edges[0])
	p := int(math.Round((1 + math.Sqrt(1+8*float64(d))) / 2))
	ps := make([]*data.Participant, len(edges))
	for a, e := range edges {
		m := mat.NewDense(p, p, nil)
		for k, v := range e {
			i, j := EdgePair(p, k)
			m.Set(i, j, v)
			m.Set(j, i, v)
		}
		ps[a] = &data.Participant{ID: fmt.Sprintf("sub-%02d", a+1), Functional: m}
	}
	return ps
}

// labelled returns the participants rows of ps with their labels.
func labelled(ps []*data.Participant, labels []int, classes int, rows []int) model.LabelledSet {
	s := model.LabelledSet{Classes: classes}
	for _, i := range rows {
		s.Participants = append(s.Participants, ps[i])
		s.Labels = append(s.Labels, labels[i])
	}
	return s
}

func maxAbs(a, b []float64) float64 {
	var m float64
	for i := range a {
		m = max(m, math.Abs(a[i]-b[i]))
	}
	return m
}

// centred returns v minus its mean: softmax intercepts are determined up
// to a common shift.
func centred(v []float64) []float64 {
	out := slices.Clone(v)
	mean := floats.Sum(v) / float64(len(v))
	for i := range out {
		out[i] -= mean
	}
	return out
}

// exact are solver settings far tighter than the defaults, for comparing
// with references solved to their limit.
var exactTol, exactIter = 1e-11, 100000

// TestLogisticAgainstScikitLearn: Logistic with one C equals
// scikit-learn's StandardScaler + LogisticRegression(penalty="l2",
// solver="lbfgs") on the same training participants to 1e-6 in the
// held-out probabilities and in the weights and intercepts on the raw
// edge scale (scikit-learn's coef_/scale_ and intercept_ − mean_·coef_/
// scale_), for binary, balanced and three-class cases, with fewer and
// with more edges than participants (testdata/logistic.json, "fits").
func TestLogisticAgainstScikitLearn(t *testing.T) {
	fx := readLogisticFixture(t)
	for _, tc := range fx.Fits {
		t.Run(tc.Name, func(t *testing.T) {
			ps := edgeParticipants(tc.Edges)
			cfg := LogisticConfig{Standardize: Standardization(tc.Standardize), Cs: []float64{tc.C},
				ClassWeight: tc.ClassWeight, MaxIter: new(exactIter), Tol: new(exactTol)}
			cfg.SetDefaults()
			if err := cfg.Validate(); err != nil {
				t.Fatal(err)
			}
			l := NewLogistic(cfg, tc.Classes, 1)
			if err := l.Fit(context.Background(), labelled(ps, tc.Labels, tc.Classes, tc.Train), model.LabelledSet{}); err != nil {
				t.Fatal(err)
			}
			if !l.Converged() {
				t.Error("did not converge")
			}
			test := labelled(ps, tc.Labels, tc.Classes, tc.Test)
			proba, err := l.PredictProba(test.Participants)
			if err != nil {
				t.Fatal(err)
			}
			// The reference's coefficients on the raw edges.
			x := denseOf(pickRows(tc.Edges, tc.Train))
			sc := fitScaler(denseRows{x}, seq(len(tc.Train)), tc.Standardize == "zscore")
			m := len(tc.Coef)
			want := mat.NewDense(len(sc.factor), m, nil)
			wantB := slices.Clone(tc.Intercept)
			for j, row := range tc.Coef {
				for k, c := range row {
					want.Set(k, j, c*sc.factor[k])
					wantB[j] -= sc.mean[k] * c * sc.factor[k]
				}
			}
			gotB := l.Intercept()
			if m > 1 {
				if sum := floats.Sum(gotB); math.Abs(sum) > 1e-10 {
					t.Errorf("softmax intercepts %v sum to %v, want 0", gotB, sum)
				}
				gotB, wantB = centred(gotB), centred(wantB)
			}
			dp := elementMax(proba, denseOf(tc.Proba))
			dw := elementMax(l.Weights(), want)
			db := maxAbs(gotB, wantB)
			t.Logf("max |Δ| vs scikit-learn: probabilities %.2g, weights %.2g, intercepts %.2g (its lbfgs vs newton-cg: %.2g)", dp, dw, db, tc.SolverGap)
			if dp > 1e-6 || dw > 1e-6 || db > 1e-6 {
				t.Errorf("differences %.3g, %.3g, %.3g exceed 1e-6", dp, dw, db)
			}
		})
	}
}

func pickRows(rows [][]float64, idx []int) [][]float64 {
	out := make([][]float64, len(idx))
	for a, i := range idx {
		out[a] = rows[i]
	}
	return out
}

// elementMax returns max |a_ij − b_ij|.
func elementMax(a, b mat.Matrix) float64 {
	r, c := a.Dims()
	var m float64
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			m = max(m, math.Abs(a.At(i, j)-b.At(i, j)))
		}
	}
	return m
}

// TestChoosePenaltyAgainstGridSearch: on the inner folds the fixture
// exports, the inner log loss of every C and the chosen C are those of
// scikit-learn's GridSearchCV(Pipeline([StandardScaler,
// LogisticRegression]), scoring="neg_log_loss", cv=PredefinedSplit)
// (testdata/logistic.json, "cv"), to 1e-6.
func TestChoosePenaltyAgainstGridSearch(t *testing.T) {
	fx := readLogisticFixture(t)
	for _, tc := range fx.CV {
		t.Run(tc.Name, func(t *testing.T) {
			x := denseOf(tc.Edges)
			var blocks gramBuffers
			feats := func(fit, query []int) (zf, zq *mat.Dense, err error) {
				zf, zq, _, _, err = edgeDesign(&blocks, denseRows{x}, fit, query, true)
				return zf, zq, err
			}
			lambdas := make([]float64, len(tc.Cs))
			for j, c := range tc.Cs {
				lambdas[j] = 1 / c
			}
			folds := slices.Max(tc.Folds) + 1
			best, losses, err := choosePenalty(context.Background(), tc.Labels, tc.Classes, tc.Folds, folds, lambdas,
				tc.ClassWeight, solverSettings{maxIter: exactIter, tol: exactTol}, feats, "model.logistic")
			if err != nil {
				t.Fatal(err)
			}
			d := maxAbs(losses, tc.MeanLogLoss)
			t.Logf("max |Δ| of the inner log loss vs GridSearchCV: %.2g; chosen C %v (GridSearchCV: %v)", d, tc.Cs[best], tc.BestC)
			if d > 1e-6 {
				t.Errorf("inner log loss %v, want %v", losses, tc.MeanLogLoss)
			}
			if tc.Cs[best] != tc.BestC {
				t.Errorf("chose C = %v, GridSearchCV chose %v", tc.Cs[best], tc.BestC)
			}
		})
	}
}

// TestKernelLogisticLinearKernel: kernel logistic regression with the
// linear kernel and penalty λ is logistic regression on the raw edges with
// C = 1/λ (a fact: the representer theorem, see KernelLogistic); checked
// against scikit-learn's LogisticRegression(C=1/λ, solver="lbfgs") on the
// raw edges (testdata/logistic.json, "kernel") to 1e-6, and against
// Logistic with standardize = "center" (centring moves only the
// unpenalised intercept).
func TestKernelLogisticLinearKernel(t *testing.T) {
	fx := readLogisticFixture(t)
	for _, tc := range fx.Kernel {
		t.Run(tc.Name, func(t *testing.T) {
			ps := edgeParticipants(tc.Edges)
			train, test := labelled(ps, tc.Labels, tc.Classes, tc.Train), labelled(ps, tc.Labels, tc.Classes, tc.Test)
			cfg := KernelLogisticConfig{Kernel: KernelLinear, Alphas: []float64{tc.Lambda}, AlphaScale: AlphaAbsolute,
				MaxIter: new(exactIter), Tol: new(exactTol)}
			cfg.SetDefaults()
			if err := cfg.Validate(); err != nil {
				t.Fatal(err)
			}
			k := NewKernelLogistic(cfg, tc.Classes, 1)
			if err := k.Fit(context.Background(), train, model.LabelledSet{}); err != nil {
				t.Fatal(err)
			}
			proba, err := k.PredictProba(test.Participants)
			if err != nil {
				t.Fatal(err)
			}
			want := mat.DenseCopyOf(denseOf(tc.Coef).T())
			gotB, wantB := k.Intercept(), tc.Intercept
			if tc.Classes > 2 {
				gotB, wantB = centred(gotB), centred(wantB)
			}
			dp, dw, db := elementMax(proba, denseOf(tc.Proba)), elementMax(k.Weights(), want), maxAbs(gotB, wantB)
			t.Logf("max |Δ| vs scikit-learn with C = 1/λ: probabilities %.2g, weights %.2g, intercepts %.2g", dp, dw, db)
			if dp > 1e-6 || dw > 1e-6 || db > 1e-6 {
				t.Errorf("differences %.3g, %.3g, %.3g exceed 1e-6", dp, dw, db)
			}
			lcfg := LogisticConfig{Standardize: StandardizeCenter, Cs: []float64{1 / tc.Lambda}, MaxIter: new(exactIter), Tol: new(exactTol)}
			lcfg.SetDefaults()
			l := NewLogistic(lcfg, tc.Classes, 1)
			if err := l.Fit(context.Background(), train, model.LabelledSet{}); err != nil {
				t.Fatal(err)
			}
			lp, err := l.PredictProba(test.Participants)
			if err != nil {
				t.Fatal(err)
			}
			if d := elementMax(lp, proba); d > 1e-7 {
				t.Errorf("Logistic with C = 1/λ differs from KernelLogistic by %.3g", d)
			}
		})
	}
}

// randomProblem invents a logitProblem of n rows, r features and the
// given classes, with random weights per row.
func randomProblem(rng *rand.Rand, n, r, classes int, lambda float64) *logitProblem {
	z := mat.NewDense(n, r, nil)
	labels := make([]int, n)
	weights := make([]float64, n)
	for i := 0; i < n; i++ {
		for j := 0; j < r; j++ {
			z.Set(i, j, rng.NormFloat64())
		}
		labels[i] = i % classes
		weights[i] = 0.5 + rng.Float64()
	}
	return &logitProblem{z: z, labels: labels, weights: weights, classes: classes, lambda: lambda}
}

// TestLogitGradient: the gradient of the logistic objective equals its
// central finite differences, step 1e-6, to 1e-7 relative (common
// practice, no source), for the binary and the softmax model.
func TestLogitGradient(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, classes := range []int{2, 3, 4} {
		lp := randomProblem(rng, 12, 5, classes, 0.7)
		m := outputs(classes)
		theta := make([]float64, 5*m+m)
		for i := range theta {
			theta[i] = rng.NormFloat64()
		}
		grad := make([]float64, len(theta))
		lp.eval(theta, grad)
		const h = 1e-6
		for i := range theta {
			up, down := slices.Clone(theta), slices.Clone(theta)
			up[i] += h
			down[i] -= h
			fd := (lp.eval(up, nil) - lp.eval(down, nil)) / (2 * h)
			if math.Abs(fd-grad[i]) > 1e-7*max(1, math.Abs(fd)) {
				t.Errorf("%d classes: ∂F/∂θ[%d] = %v, finite difference %v", classes, i, grad[i], fd)
			}
		}
	}
}

// dualObjective is the kernel logistic objective in the dual coefficients
// α (n × m) and intercepts b, written out directly from its definition
// (see KernelLogistic): Σᵢ sᵢ·ℓᵢ(Kα + 1bᵀ) + λ/2·tr(αᵀKα), with its
// gradient ∂/∂α = K(R + λα), ∂/∂b = 1ᵀR, Rᵢₖ = sᵢ·(pᵢₖ − [yᵢ = k]).
func dualObjective(kern *mat.Dense, labels []int, weights []float64, classes int, lambda float64, alpha *mat.Dense, b []float64) (float64, *mat.Dense, []float64) {
	n, m := alpha.Dims()
	var f, ka mat.Dense
	ka.Mul(kern, alpha)
	f.CloneFrom(&ka)
	addToColumns(&f, b)
	res := mat.NewDense(n, m, nil)
	var value float64
	for i := 0; i < n; i++ {
		value += weights[i] * crossEntropy(f.RawRowView(i), labels[i], res.RawRowView(i))
		floats.Scale(weights[i], res.RawRowView(i))
	}
	value += lambda / 2 * mat.Sum(mulElem(alpha, &ka))
	var inner, ga mat.Dense
	inner.Scale(lambda, alpha)
	inner.Add(&inner, res)
	ga.Mul(kern, &inner)
	gb := make([]float64, m)
	for i := 0; i < n; i++ {
		floats.Add(gb, res.RawRowView(i))
	}
	return value, &ga, gb
}

func mulElem(a, b mat.Matrix) *mat.Dense {
	var out mat.Dense
	out.MulElem(a, b)
	return &out
}

// TestKernelLogisticDual: the gradient of the dual objective matches its
// central finite differences (common practice, no source), and the
// coefficients KernelLogistic fits with the correlation kernel are a
// stationary point of that objective: its gradient, relative to the
// gradient at α = 0, b = 0, is below 1e-6 — the optimality of the
// fit in the variables the problem is stated in, not in the features it
// is solved in.
func TestKernelLogisticDual(t *testing.T) {
	for _, classes := range []int{2, 3} {
		t.Run(fmt.Sprint(classes, " classes"), func(t *testing.T) {
			rng := rand.New(rand.NewPCG(5, uint64(classes)))
			const n, p = 24, 7
			edges := make([][]float64, n)
			labels := make([]int, n)
			for i := range edges {
				labels[i] = i % classes
				edges[i] = make([]float64, NumEdges(p))
				for k := range edges[i] {
					edges[i][k] = rng.NormFloat64()
				}
				edges[i][0] += float64(labels[i])
			}
			ps := edgeParticipants(edges)
			set := labelled(ps, labels, classes, seq(n))
			cfg := KernelLogisticConfig{Alphas: []float64{0.3}, ClassWeight: ClassWeightBalanced, MaxIter: new(exactIter), Tol: new(1e-10)}
			cfg.SetDefaults()
			k := NewKernelLogistic(cfg, classes, 1)
			if err := k.Fit(context.Background(), set, model.LabelledSet{}); err != nil {
				t.Fatal(err)
			}
			x, _, err := kernelEdges(ps, InputFunctional, KernelCorrelation, 0)
			if err != nil {
				t.Fatal(err)
			}
			kern := mat.NewDense(n, n, nil)
			gram(kern, x)
			lambda := 0.3 * mat.Trace(kern) / n // alpha_scale = "relative"
			weights := classWeights(labels, classes, ClassWeightBalanced)
			m := outputs(classes)

			// Finite differences at a random point.
			alpha := mat.NewDense(n, m, nil)
			b := make([]float64, m)
			alpha.Apply(func(_, _ int, _ float64) float64 { return 0.3 * rng.NormFloat64() }, alpha)
			for j := range b {
				b[j] = rng.NormFloat64()
			}
			_, ga, gb := dualObjective(kern, labels, weights, classes, lambda, alpha, b)
			const h = 1e-6
			for i := 0; i < n; i++ {
				for j := 0; j < m; j++ {
					v := alpha.At(i, j)
					alpha.Set(i, j, v+h)
					up, _, _ := dualObjective(kern, labels, weights, classes, lambda, alpha, b)
					alpha.Set(i, j, v-h)
					down, _, _ := dualObjective(kern, labels, weights, classes, lambda, alpha, b)
					alpha.Set(i, j, v)
					if fd := (up - down) / (2 * h); math.Abs(fd-ga.At(i, j)) > 1e-6*max(1, math.Abs(fd)) {
						t.Errorf("∂/∂α[%d, %d] = %v, finite difference %v", i, j, ga.At(i, j), fd)
					}
				}
			}
			for j := range b {
				v := b[j]
				b[j] = v + h
				up, _, _ := dualObjective(kern, labels, weights, classes, lambda, alpha, b)
				b[j] = v - h
				down, _, _ := dualObjective(kern, labels, weights, classes, lambda, alpha, b)
				b[j] = v
				if fd := (up - down) / (2 * h); math.Abs(fd-gb[j]) > 1e-6*max(1, math.Abs(fd)) {
					t.Errorf("∂/∂b[%d] = %v, finite difference %v", j, gb[j], fd)
				}
			}

			// Stationarity of the fit.
			_, g0, g0b := dualObjective(kern, labels, weights, classes, lambda, mat.NewDense(n, m, nil), make([]float64, m))
			scale := max(mat.Norm(g0, math.Inf(1)), floats.Norm(g0b, math.Inf(1)))
			_, ga, gb = dualObjective(kern, labels, weights, classes, lambda, k.dualCoef, k.Intercept())
			rel := max(elementMax(ga, mat.NewDense(n, m, nil)), floats.Norm(gb, math.Inf(1))) / scale
			t.Logf("dual gradient at the fit, relative to that at zero: %.2g", rel)
			if rel > 1e-6 {
				t.Errorf("the fitted coefficients are not stationary: relative gradient %.3g", rel)
			}
		})
	}
}

// TestMajority: the majority-class predictor gives the training class
// frequencies, as scikit-learn's DummyClassifier(strategy="prior")
// (testdata/logistic.json, "majority").
func TestMajority(t *testing.T) {
	fx := readLogisticFixture(t).Majority
	parts := edgeParticipants(make2(len(fx.Labels)))
	m := NewMajority(fx.Classes)
	if err := m.Fit(context.Background(), labelled(parts, fx.Labels, fx.Classes, seq(len(fx.Labels))), model.LabelledSet{}); err != nil {
		t.Fatal(err)
	}
	proba, err := m.PredictProba(parts[:2])
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 2; i++ {
		if d := maxAbs(proba.RawRowView(i), fx.Proba); d > 1e-15 {
			t.Errorf("row %d: %v, want %v", i, proba.RawRowView(i), fx.Proba)
		}
	}
}

// make2 returns n edge vectors of one edge (2 × 2 matrices).
func make2(n int) [][]float64 {
	out := make([][]float64, n)
	for i := range out {
		out[i] = []float64{float64(i)}
	}
	return out
}

// TestStratifiedFolds: with participants in groups of one, every class is
// dealt evenly (fold counts of a class differ by at most one, as
// scikit-learn's StratifiedKFold does); participants sharing a group land
// in one fold; a class smaller than the fold count is an error naming the
// key.
func TestStratifiedFolds(t *testing.T) {
	labels := []int{0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2, 2, 2, 2, 2, 2, 2, 2}
	ps := edgeParticipants(make2(len(labels)))
	for _, grouped := range []bool{false, true} {
		if grouped { // pairs (0, 1), (4, 5), … are families
			for i := 0; i+1 < len(ps); i += 4 {
				ps[i].Group, ps[i+1].Group = fmt.Sprint("family", i), fmt.Sprint("family", i)
			}
		}
		foldOf, err := stratifiedFolds(ps, labels, 3, 3, 9, "model.logistic.inner_folds")
		if err != nil {
			t.Fatal(err)
		}
		count := make([][]int, 3)
		for f := range count {
			count[f] = make([]int, 3)
		}
		for i, f := range foldOf {
			count[f][labels[i]]++
			if g := ps[i].Group; g != "" {
				for j := range ps {
					if ps[j].Group == g && foldOf[j] != f {
						t.Errorf("group %s split over folds", g)
					}
				}
			}
		}
		if !grouped {
			for c := 0; c < 3; c++ {
				lo, hi := math.MaxInt, 0
				for f := 0; f < 3; f++ {
					lo, hi = min(lo, count[f][c]), max(hi, count[f][c])
				}
				if hi-lo > 1 {
					t.Errorf("class %d spread %v over the folds", c, count)
				}
			}
		}
	}
	for _, p := range ps {
		p.Group = ""
	}
	if _, err := stratifiedFolds(ps, labels, 3, 5, 9, "model.logistic.inner_folds"); err == nil ||
		!strings.Contains(err.Error(), "model.logistic.inner_folds") || !strings.Contains(err.Error(), "class 1 has only 4") {
		t.Errorf("5 folds with a class of 4: error %v", err)
	}
}

// TestClassifierConfigErrors: every bad setting is refused with its key.
func TestClassifierConfigErrors(t *testing.T) {
	tests := []struct {
		cfg  Config
		want string
	}{
		{Config{Logistic: &LogisticConfig{Cs: []float64{}}}, "model.logistic.cs: at least one"},
		{Config{Logistic: &LogisticConfig{Cs: []float64{1, 0}}}, "model.logistic.cs: must be positive"},
		{Config{Logistic: &LogisticConfig{Cs: []float64{math.Inf(1)}}}, "model.logistic.cs: must be positive"},
		{Config{Logistic: &LogisticConfig{InnerFolds: new(1)}}, "model.logistic.inner_folds"},
		{Config{Logistic: &LogisticConfig{ClassWeight: "auto"}}, `model.logistic.class_weight: want "none" or "balanced"`},
		{Config{Logistic: &LogisticConfig{MaxIter: new(0)}}, "model.logistic.max_iter"},
		{Config{Logistic: &LogisticConfig{Tol: new(-1.0)}}, "model.logistic.tol"},
		{Config{Logistic: &LogisticConfig{Standardize: "none"}}, "model.logistic.standardize"},
		{Config{KernelLogistic: &KernelLogisticConfig{Alphas: []float64{0, 1}}}, "model.kernel_logistic.alphas: must be positive, found 0"},
		{Config{KernelLogistic: &KernelLogisticConfig{AlphaScale: AlphaAbsolute}}, "model.kernel_logistic.alphas"},
		{Config{KernelLogistic: &KernelLogisticConfig{Kernel: "rbf"}}, "model.kernel_logistic.kernel"},
		{Config{KernelLogistic: &KernelLogisticConfig{Tol: new(0.0)}}, "model.kernel_logistic.tol"},
		{Config{Majority: &MajorityConfig{}, Mean: &MeanConfig{}}, "model.mean and model.majority"},
	}
	for _, tt := range tests {
		tt.cfg.SetDefaults()
		err := tt.cfg.Validate()
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: error %v, want one containing %q", tt.cfg.Kind(), err, tt.want)
		}
	}
	// A kind for labels builds no regressor, and one for scores no
	// classifier.
	cfg := Config{Logistic: &LogisticConfig{}}
	cfg.SetDefaults()
	if _, err := cfg.New(1, 1); err == nil || !strings.Contains(err.Error(), "model.logistic") {
		t.Errorf("New of logistic: error %v", err)
	}
	cfg = Config{Ridge: &RidgeConfig{}}
	cfg.SetDefaults()
	if _, err := cfg.NewClassifier(2, 1); err == nil || !strings.Contains(err.Error(), "model.ridge") {
		t.Errorf("NewClassifier of ridge: error %v", err)
	}
}

// classCohort invents n participants over p regions in classes classes:
// functional edges N(0, 1), the first four shifted by ±1.5 × the class; a
// participant's Group is its index mod 7.
func classCohort(seed uint64, n, p, classes int) ([]*data.Participant, []int) {
	rng := rand.New(rand.NewPCG(seed, 2))
	edges := make([][]float64, n)
	labels := make([]int, n)
	for i := range edges {
		labels[i] = rng.IntN(classes)
		edges[i] = make([]float64, NumEdges(p))
		for k := range edges[i] {
			edges[i][k] = rng.NormFloat64()
		}
		for k := 0; k < 4; k++ {
			edges[i][k] += 1.5 * float64(labels[i]) * float64(1-k%2*2) // +, −, +, −
		}
	}
	ps := edgeParticipants(edges)
	for i, q := range ps {
		q.Group = fmt.Sprint(i % 7)
	}
	return ps, labels
}

// TestClassifiersFitSaveLoad: each classification baseline, on an
// invented cohort with a class signal, fits with its default grid and
// inner folds, gives rows of probabilities that sum to 1, beats the
// majority log loss on held-out participants (the signal is strong), and
// predicts the same after Save and LoadClassifier (a round trip; common
// practice, no source). Fit errors name the key.
func TestClassifiersFitSaveLoad(t *testing.T) {
	tests := []struct {
		name string
		cfg  Config
	}{
		{"majority", Config{Majority: &MajorityConfig{}}},
		{"logistic binary", Config{Logistic: &LogisticConfig{}}},
		{"logistic both balanced", Config{Logistic: &LogisticConfig{Input: InputBoth, ClassWeight: ClassWeightBalanced}}},
		{"kernel logistic correlation", Config{KernelLogistic: &KernelLogisticConfig{}}},
		{"kernel logistic linear", Config{KernelLogistic: &KernelLogisticConfig{Kernel: KernelLinear, InnerFolds: new(3)}}},
	}
	for _, classes := range []int{2, 3} {
		ps, labels := classCohort(uint64(classes), 90, 8, classes)
		for _, q := range ps {
			q.Structural = q.Functional
		}
		test := labelled(ps, labels, classes, seq(90)[60:])
		var floor float64
		for _, tt := range tests {
			t.Run(fmt.Sprint(tt.name, " ", classes, " classes"), func(t *testing.T) {
				tt.cfg.SetDefaults()
				c, err := tt.cfg.NewClassifier(classes, 3)
				if err != nil {
					t.Fatal(err)
				}
				// train split into train and valid, as the runner gives them.
				fitSet, validSet := labelled(ps, labels, classes, seq(50)), labelled(ps, labels, classes, seq(60)[50:])
				if err := c.Fit(context.Background(), fitSet, validSet); err != nil {
					t.Fatal(err)
				}
				proba, err := c.PredictProba(test.Participants)
				if err != nil {
					t.Fatal(err)
				}
				for i := range test.Participants {
					if s := floats.Sum(proba.RawRowView(i)); math.Abs(s-1) > 1e-12 {
						t.Fatalf("row %d sums to %v", i, s)
					}
				}
				loss := logLoss(test.Labels, proba)
				if tt.cfg.Majority != nil {
					floor = loss
				} else if loss >= floor {
					t.Errorf("held-out log loss %.3f, not below the majority's %.3f", loss, floor)
				}
				dir := t.TempDir()
				if err := c.(interface{ Save(string) error }).Save(dir); err != nil {
					t.Fatal(err)
				}
				k, err := model.Lookup(tt.cfg.Kind())
				if err != nil {
					t.Fatal(err)
				}
				back, err := k.LoadClassifier(dir)
				if err != nil {
					t.Fatal(err)
				}
				again, err := back.PredictProba(test.Participants)
				if err != nil {
					t.Fatal(err)
				}
				if d := elementMax(again, proba); d > 1e-12 {
					t.Errorf("after Save and LoadClassifier the probabilities differ by %.3g", d)
				}
			})
		}
	}
}

// TestClassifierFitErrors: a class without participants, more inner folds
// than a class has participants, a label of another number of classes and
// constant edges are errors naming the key.
func TestClassifierFitErrors(t *testing.T) {
	ps, labels := classCohort(1, 20, 5, 2)
	only0 := []int{}
	for i, y := range labels {
		if y == 0 {
			only0 = append(only0, i)
		}
	}
	onlyOne := labelled(ps, labels, 2, only0)
	flat := make([]*data.Participant, 20) // every edge 0
	for i := range flat {
		flat[i] = &data.Participant{ID: fmt.Sprint("flat-", i), Functional: mat.NewDense(5, 5, nil)}
	}
	few := labelled(ps, labels, 2, append(slices.Clone(only0), slices.Index(labels, 1)))
	tests := []struct {
		name string
		c    model.Classifier
		set  model.LabelledSet
		want string
	}{
		{"logistic, one class", NewLogistic(withDefaults(LogisticConfig{})), onlyOne, "model.logistic: class 1 has no participant"},
		{"kernel logistic, one class", NewKernelLogistic(withDefaultsK(KernelLogisticConfig{})), onlyOne, "model.kernel_logistic: class 1 has no participant"},
		{"logistic, tiny class", NewLogistic(withDefaults(LogisticConfig{})), few, "model.logistic.inner_folds: 5 inner folds, but class 1 has only 1"},
		{"wrong classes", NewLogistic(withDefaults(LogisticConfig{})), labelled(ps, labels, 3, seq(20)), "a label of 3 classes given to a model built for 2"},
		{"constant edges", NewLogistic(withDefaults(LogisticConfig{Cs: []float64{1}})), labelled(flat, labels, 2, seq(20)), "model.logistic: every functional edge is constant"},
	}
	for _, tt := range tests {
		err := tt.c.Fit(context.Background(), tt.set, model.LabelledSet{})
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: error %v, want one containing %q", tt.name, err, tt.want)
		}
	}
}

func withDefaults(c LogisticConfig) (LogisticConfig, int, int64) {
	c.SetDefaults()
	return c, 2, 1
}

func withDefaultsK(c KernelLogisticConfig) (KernelLogisticConfig, int, int64) {
	c.SetDefaults()
	return c, 2, 1
}
