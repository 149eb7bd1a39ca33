package linear

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// logitProblem is L2-penalised logistic regression on the n × r features
// z with an unpenalised intercept: it minimizes over β (r × m) and b (m)
//
//	F(β, b) = (1/n) · [Σᵢ sᵢ·ℓᵢ + λ/2·‖β‖²_F]
//
// with sᵢ the weight of row i and ℓᵢ the cross-entropy of its class yᵢ.
// For two classes m = 1 and the model is the binary logistic model,
// fᵢ = b + zᵢ·β, P(class 1) = σ(fᵢ) = 1/(1 + e^{−fᵢ}),
// ℓᵢ = log(1 + e^{fᵢ}) − yᵢ·fᵢ; for K > 2 classes m = K and it is the
// multinomial (softmax) model, fᵢₖ = bₖ + zᵢ·βₖ,
// P(class k) = e^{fᵢₖ}/Σⱼ e^{fᵢⱼ}, ℓᵢ = log Σⱼ e^{fᵢⱼ} − fᵢ,yᵢ.
// These are the models and the objective of scikit-learn's
// LogisticRegression(penalty="l2", C = 1/λ, solver="lbfgs") with sample
// weights sᵢ: binary for two classes, multinomial for more. Its lbfgs
// minimizes this same F (the weights divided by n), so its tol bounds
// the same gradient as solverSettings.tol does here.
// The gradient is ∂F/∂β = (zᵀR + λβ)/n, ∂F/∂b = (1ᵀR)/n with
// Rᵢₖ = sᵢ·(pᵢₖ − [yᵢ = k]).
type logitProblem struct {
	z       *mat.Dense // n × r
	labels  []int      // n classes in [0, classes)
	weights []float64  // n row weights sᵢ
	classes int
	lambda  float64 // λ = 1/C
}

// outputs returns m, the number of linear functions: 1 for two classes,
// the number of classes otherwise.
func outputs(classes int) int {
	if classes == 2 {
		return 1
	}
	return classes
}

// logitParams are the fitted β (r × m) and b (m) of a logitProblem.
type logitParams struct {
	beta      *mat.Dense
	intercept []float64
}

// eval returns F at theta = (β row by row, then b) and, when grad is not
// nil, writes ∇F into it.
func (lp *logitProblem) eval(theta, grad []float64) float64 {
	n, r := lp.z.Dims()
	m := outputs(lp.classes)
	beta := mat.NewDense(r, m, theta[:r*m])
	b := theta[r*m:]
	var f mat.Dense
	f.Mul(lp.z, beta)
	var loss float64
	for i := 0; i < n; i++ {
		row := f.RawRowView(i)
		floats.Add(row, b)
		loss += lp.weights[i] * crossEntropy(row, lp.labels[i], row)
		// row now holds pᵢ − [yᵢ = k], times sᵢ below.
		floats.Scale(lp.weights[i], row)
	}
	penalty := floats.Dot(theta[:r*m], theta[:r*m])
	value := (loss + lp.lambda/2*penalty) / float64(n)
	if grad == nil {
		return value
	}
	gb := mat.NewDense(r, m, grad[:r*m])
	gb.Mul(lp.z.T(), &f)
	floats.AddScaled(grad[:r*m], lp.lambda, theta[:r*m])
	gi := grad[r*m:]
	for k := range gi {
		gi[k] = 0
	}
	for i := 0; i < n; i++ {
		floats.Add(gi, f.RawRowView(i))
	}
	floats.Scale(1/float64(n), grad)
	return value
}

// crossEntropy returns the cross-entropy ℓ of class y for the linear
// functions f (one for the binary model, one per class for softmax) and
// writes the residual p − onehot(y) into res (length of f; it may be f).
// For the binary model p = σ(f₀) and the residual is p − y.
func crossEntropy(f []float64, y int, res []float64) float64 {
	if len(f) == 1 {
		v := f[0]
		loss := softplus(v) - float64(y)*v
		res[0] = sigmoid(v) - float64(y)
		return loss
	}
	lse := logSumExp(f)
	loss := lse - f[y]
	for k, v := range f {
		res[k] = math.Exp(v - lse)
	}
	res[y]--
	return loss
}

// probabilities writes the K class probabilities of the linear functions
// f into dst: (1 − σ(f₀), σ(f₀)) for the binary model, softmax(f)
// otherwise.
func probabilities(dst, f []float64) {
	if len(f) == 1 {
		p1 := sigmoid(f[0])
		dst[0], dst[1] = sigmoid(-f[0]), p1
		return
	}
	lse := logSumExp(f)
	for k, v := range f {
		dst[k] = math.Exp(v - lse)
	}
}

// softplus returns log(1 + eˣ) without overflow.
func softplus(x float64) float64 {
	if x > 0 {
		return x + math.Log1p(math.Exp(-x))
	}
	return math.Log1p(math.Exp(x))
}

// sigmoid returns 1/(1 + e^{−x}) without overflow.
func sigmoid(x float64) float64 {
	if x >= 0 {
		return 1 / (1 + math.Exp(-x))
	}
	e := math.Exp(x)
	return e / (1 + e)
}

func logSumExp(f []float64) float64 {
	mx := slices.Max(f)
	var s float64
	for _, v := range f {
		s += math.Exp(v - mx)
	}
	return mx + math.Log(s)
}

// solverSettings are the stopping rules of an L-BFGS fit.
type solverSettings struct {
	maxIter int
	tol     float64
}

// fit minimizes F by L-BFGS (gonum's optimize.LBFGS) from start (nil:
// zero), stopping when the largest absolute element of ∇F is below tol
// or after maxIter iterations. It reports whether the gradient rule
// stopped it. A line search that can make no more progress ends the fit
// where it is: that happens only at the limit of floating-point
// precision.
func (lp *logitProblem) fit(start *logitParams, s solverSettings) (logitParams, bool, error) {
	_, r := lp.z.Dims()
	m := outputs(lp.classes)
	theta := make([]float64, r*m+m)
	if start != nil {
		copy(theta, start.beta.RawMatrix().Data)
		copy(theta[r*m:], start.intercept)
	}
	// gonum asks for the value and the gradient at a point in two calls;
	// one evaluation serves both.
	var lastX, lastGrad []float64
	var lastF float64
	at := func(x []float64) {
		if lastX != nil && slices.Equal(x, lastX) {
			return
		}
		lastX = append(lastX[:0], x...)
		lastGrad = slices.Grow(lastGrad[:0], len(x))[:len(x)]
		lastF = lp.eval(x, lastGrad)
	}
	prob := optimize.Problem{
		Func: func(x []float64) float64 { at(x); return lastF },
		Grad: func(g, x []float64) { at(x); copy(g, lastGrad) },
	}
	settings := &optimize.Settings{
		GradientThreshold: s.tol,
		MajorIterations:   s.maxIter,
		Converger:         optimize.NeverTerminate{},
	}
	res, err := optimize.Minimize(prob, theta, settings, &optimize.LBFGS{})
	if res == nil {
		return logitParams{}, false, fmt.Errorf("linear: logistic fit: %w", err)
	}
	x := res.Location.X
	for _, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return logitParams{}, false, fmt.Errorf("linear: logistic fit: %w", model.ErrDiverged)
		}
	}
	converged := res.Status == optimize.GradientThreshold || res.Status == optimize.MethodConverge
	if err != nil && res.Location.Gradient != nil {
		// A failed line search stops where no step lowers F any more.
		converged = floats.Norm(res.Location.Gradient, math.Inf(1)) < math.Max(s.tol, 1e-8)
	}
	out := logitParams{beta: mat.NewDense(r, m, slices.Clone(x[:r*m])), intercept: slices.Clone(x[r*m:])}
	return out, converged, nil
}

// linearFunctions returns zβ + b, len(z) × m.
func (p logitParams) linearFunctions(z mat.Matrix) *mat.Dense {
	var f mat.Dense
	f.Mul(z, p.beta)
	addToColumns(&f, p.intercept)
	return &f
}

// probaOf returns the n × classes probabilities of the linear functions f
// (n × m).
func probaOf(f *mat.Dense, classes int) *mat.Dense {
	n, _ := f.Dims()
	out := mat.NewDense(n, classes, nil)
	for i := 0; i < n; i++ {
		probabilities(out.RawRowView(i), f.RawRowView(i))
	}
	return out
}

// classWeights returns the weight of each of the n labels for the given
// weighting: 1 for ClassWeightNone; for ClassWeightBalanced
// w_k = n/(K·n_k), n_k the labels of class k (scikit-learn's
// class_weight="balanced"), so that every class weighs n/K in all.
func classWeights(labels []int, classes int, cw ClassWeight) []float64 {
	w := make([]float64, len(labels))
	count := make([]int, classes)
	for _, y := range labels {
		count[y]++
	}
	for i, y := range labels {
		w[i] = 1
		if cw == ClassWeightBalanced {
			w[i] = float64(len(labels)) / (float64(classes) * float64(count[y]))
		}
	}
	return w
}

// logLoss returns the mean cross-entropy −(1/n)·Σᵢ log pᵢ,yᵢ of the
// n × K probabilities, each clipped to [1e-15, 1 − 1e-15] (as eval.LogLoss
// and scikit-learn's log_loss do).
func logLoss(labels []int, proba *mat.Dense) float64 {
	var s float64
	for i, y := range labels {
		p := min(max(proba.At(i, y), 1e-15), 1-1e-15)
		s -= math.Log(p)
	}
	return s / float64(len(labels))
}

// joinLabelled returns the participants and labels of train followed by
// those of valid, checking them against the classifier's number of
// classes. key names the kind's table in errors, such as "model.logistic".
func joinLabelled(train, valid model.LabelledSet, classes int, key string) ([]*data.Participant, []int, error) {
	if train.Len() == 0 {
		return nil, nil, fmt.Errorf("%s: the training set has no participants", key)
	}
	ps := append(slices.Clip(train.Participants), valid.Participants...)
	labels := append(slices.Clip(train.Labels), valid.Labels...)
	if len(train.Labels) != train.Len() || len(valid.Labels) != valid.Len() {
		panic(fmt.Sprintf("linear: %d and %d labels for %d and %d participants", len(train.Labels), len(valid.Labels), train.Len(), valid.Len()))
	}
	for _, s := range []model.LabelledSet{train, valid} {
		if s.Len() > 0 && s.Classes != classes {
			return nil, nil, fmt.Errorf("%s: a label of %d classes given to a model built for %d", key, s.Classes, classes)
		}
	}
	for i, y := range labels {
		if y < 0 || y >= classes {
			return nil, nil, fmt.Errorf("%s: participant %q: class %d, want one in 0..%d", key, ps[i].ID, y, classes-1)
		}
	}
	return ps, labels, nil
}

// requireEveryClass returns an error naming key when a class has no
// participant among labels: a logistic model cannot be fitted then (the
// missing class's intercept has no finite optimum).
func requireEveryClass(labels []int, classes int, key string) error {
	count := make([]int, classes)
	for _, y := range labels {
		count[y]++
	}
	for k, c := range count {
		if c == 0 {
			return fmt.Errorf("%s: class %d has no participant in the training fold; every class needs at least one", key, k)
		}
	}
	return nil
}

// stratifiedFolds assigns each participant to one of k inner folds, with
// each class spread as evenly over the folds as the groups allow: groups
// (participants sharing a non-empty Group, kept in one fold; a participant
// without a group is a group of one) are shuffled with seed, sorted
// largest first, and each goes to the fold whose counts of the group's
// classes, each relative to its class size, are lowest (ties: the fold
// with fewer participants, then the lower index). For groups of one this
// deals each class round the folds, so fold counts of a class differ by at
// most one (as scikit-learn's StratifiedKFold). A class with fewer
// participants than k, or fewer groups than k, is an error naming key.
func stratifiedFolds(ps []*data.Participant, labels []int, classes, k int, seed int64, key string) ([]int, error) {
	count := make([]int, classes)
	for _, y := range labels {
		count[y]++
	}
	for c, n := range count {
		if n < k {
			return nil, fmt.Errorf("%s: %d inner folds, but class %d has only %d participants in the training fold", key, k, c, n)
		}
	}
	groupOf := make([]string, len(ps))
	for i, p := range ps {
		groupOf[i] = p.Group
	}
	groups := data.GroupIndices(groupOf)
	if len(groups) < k {
		return nil, fmt.Errorf("%s: %d inner folds, but the training fold has only %d participants or groups", key, k, len(groups))
	}
	rng := rand.New(rand.NewPCG(uint64(seed), 0x9e3779b97f4a7c15))
	rng.Shuffle(len(groups), func(i, j int) { groups[i], groups[j] = groups[j], groups[i] })
	slices.SortStableFunc(groups, func(a, b []int) int { return len(b) - len(a) })
	foldOf := make([]int, len(ps))
	size := make([]int, k)
	perClass := make([][]int, k)
	for f := range perClass {
		perClass[f] = make([]int, classes)
	}
	for _, g := range groups {
		best, bestCost := 0, math.Inf(1)
		for f := 0; f < k; f++ {
			var cost float64
			for _, i := range g {
				cost += float64(perClass[f][labels[i]]) / float64(count[labels[i]])
			}
			if cost < bestCost || cost == bestCost && size[f] < size[best] {
				best, bestCost = f, cost
			}
		}
		for _, i := range g {
			foldOf[i] = best
			perClass[best][labels[i]]++
		}
		size[best] += len(g)
	}
	return foldOf, nil
}

// features gives a penalty search the features of one inner fold: zf for
// the fitting rows fit and zq for the held-out rows query.
type features func(fit, query []int) (zf, zq *mat.Dense, err error)

// choosePenalty returns the index into lambdas with the lowest inner
// cross-validated log loss and the loss of each: fold f holds out the
// rows with foldOf[row] == f, a model is fitted on the others (weighted by
// their own class weights) at every penalty, and the score of a penalty is
// the mean over folds of the held-out rows' mean log loss (unweighted,
// as scikit-learn's GridSearchCV with scoring="neg_log_loss" averages).
// Ties go to the earlier penalty. The penalties are fitted from the
// largest down, each fit starting from the solution of the previous one.
func choosePenalty(ctx context.Context, labels []int, classes int, foldOf []int, folds int, lambdas []float64,
	cw ClassWeight, s solverSettings, feats features, key string) (int, []float64, error) {
	order := seq(len(lambdas))
	slices.SortStableFunc(order, func(a, b int) int {
		switch {
		case lambdas[a] > lambdas[b]:
			return -1
		case lambdas[a] < lambdas[b]:
			return 1
		}
		return 0
	})
	losses := make([]float64, len(lambdas))
	for f := 0; f < folds; f++ {
		var fit, query []int
		for i, g := range foldOf {
			if g == f {
				query = append(query, i)
			} else {
				fit = append(fit, i)
			}
		}
		yFit, yQuery := pick(labels, fit), pick(labels, query)
		if err := requireEveryClass(yFit, classes, key+".inner_folds"); err != nil {
			return 0, nil, fmt.Errorf("inner fold %d: %w", f+1, err)
		}
		zf, zq, err := feats(fit, query)
		if err != nil {
			return 0, nil, err
		}
		lp := logitProblem{z: zf, labels: yFit, weights: classWeights(yFit, classes, cw), classes: classes}
		var start *logitParams
		for _, j := range order {
			if err := ctx.Err(); err != nil {
				return 0, nil, err
			}
			lp.lambda = lambdas[j]
			params, _, err := lp.fit(start, s)
			if err != nil {
				return 0, nil, err
			}
			start = &params
			losses[j] += logLoss(yQuery, probaOf(params.linearFunctions(zq), classes)) / float64(folds)
		}
	}
	best := 0
	for j, l := range losses {
		if l < losses[best] {
			best = j
		}
	}
	return best, losses, nil
}

func pick(v []int, idx []int) []int {
	out := make([]int, len(idx))
	for a, i := range idx {
		out[a] = v[i]
	}
	return out
}

// kernelBasis is the square root of a positive semi-definite n × n kernel
// K = U·diag(λ)·Uᵀ on its components with λ above n·ε·λ_max:
// z = U·diag(√λ) (n × r), so that K = zzᵀ, and proj = U·diag(1/√λ), which
// maps the kernel rows k(x, ·) of any participant x to its features
// k(x, ·)·proj (the features of the fitting rows being z). A model
// linear in z with weights β is the kernel expansion with dual
// coefficients α = proj·β, and ‖β‖² = αᵀKα; so penalised logistic
// regression with kernel K is exactly logistic regression on z.
type kernelBasis struct {
	z, proj *mat.Dense
}

func newKernelBasis(k mat.Matrix) (kernelBasis, error) {
	spec, err := dualSpectrum(k)
	if err != nil {
		return kernelBasis{}, err
	}
	n, _ := k.Dims()
	var keep []int
	for i, v := range spec.values {
		if v > spec.tol {
			keep = append(keep, i)
		}
	}
	if len(keep) == 0 {
		return kernelBasis{}, errors.New("linear: the kernel of the training participants is zero")
	}
	b := kernelBasis{z: mat.NewDense(n, len(keep), nil), proj: mat.NewDense(n, len(keep), nil)}
	for c, i := range keep {
		root := math.Sqrt(spec.values[i])
		for a := 0; a < n; a++ {
			u := spec.left.At(a, i)
			b.z.Set(a, c, u*root)
			b.proj.Set(a, c, u/root)
		}
	}
	return b, nil
}

// of returns the features kq·proj of kernel rows kq (m × n).
func (b kernelBasis) of(kq mat.Matrix) *mat.Dense {
	var out mat.Dense
	out.Mul(kq, b.proj)
	return &out
}
