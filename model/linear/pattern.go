package linear

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

var (
	_ model.Interpreter = (*Ridge)(nil)
	_ model.Interpreter = (*KernelRidge)(nil)
	_ model.Interpreter = (*CPM)(nil)
)

// EdgeImportance returns, per target, the activation pattern of the fitted
// ridge model over ps (Haufe et al. 2014, NeuroImage 87:96–110): for each
// edge e,
//
//	a_e = cov(x_e, ŷ) = Σᵢ (x_ie − x̄_e)(ŷ_i − ȳ̂) / (n − 1)
//
// over the n participants of ps, x_ie the raw edge value and ŷ_i the
// model's prediction. Unlike the weights, which a linear model also uses
// to cancel noise shared by edges, a pattern shows how each edge varies
// with the prediction. Each map is p × p and symmetric with a zero
// diagonal, in the units of the edge times the units of Y. For input
// "both" there are two maps per target, the functional edges' for every
// target then the structural edges' (ImportanceViews: the two are in
// different units and are never summed). ps needs at least two
// participants.
func (r *Ridge) EdgeImportance(ps []*data.Participant) ([]*mat.Dense, error) {
	if r.intercept == nil {
		return nil, errNotFitted
	}
	return activationPatterns(r, r.cfg.Input, r.p, ps)
}

// EdgeImportance returns, per target, the activation pattern of the fitted
// kernel ridge model over ps, a_e = cov(x_e, ŷ) with x_e the raw edge (not
// the normalized vector the correlation kernel compares), as for
// Ridge.EdgeImportance.
func (k *KernelRidge) EdgeImportance(ps []*data.Participant) ([]*mat.Dense, error) {
	if k.means == nil {
		return nil, errNotFitted
	}
	return activationPatterns(k, k.cfg.Input, k.p, ps)
}

// EdgeImportance returns, per target, the edges CPM selected in its last
// Fit: +1 for an edge of the positive network, −1 for one of the negative
// network, 0 elsewhere (p × p, symmetric). The maps do not depend on ps,
// which may be empty. For input "both" the functional edges' maps of
// every target come first, then the structural edges' (ImportanceViews).
func (c *CPM) EdgeImportance(ps []*data.Participant) ([]*mat.Dense, error) {
	if c.coef == nil {
		return nil, errNotFitted
	}
	t, e := len(c.coef), NumEdges(c.p)
	maps := make([]*mat.Dense, inputViews(c.cfg.Input)*t)
	for i := range maps {
		maps[i] = mat.NewDense(c.p, c.p, nil)
	}
	for j := range c.coef {
		for sign, edges := range map[float64][]int{1: c.positive[j], -1: c.negative[j]} {
			for _, k := range edges {
				m := maps[k/e*t+j] // the structural edges of "both" follow the functional ones
				a, b := EdgePair(c.p, k%e)
				m.Set(a, b, sign)
				m.Set(b, a, sign)
			}
		}
	}
	return maps, nil
}

// importanceViews names the importance views of a baseline reading input
// (model.Kind.ImportanceViews): its matrix, or both.
func importanceViews(input Input) []string {
	if input == InputBoth {
		return []string{string(InputFunctional), string(InputStructural)}
	}
	return []string{string(input)}
}

// activationPatterns returns cov(x_e, ŷ_j) over ps for every edge e of
// input and every column j of reg's predictions, as symmetric p × p maps:
// for input "both" the functional edges' maps of every column, then the
// structural edges'.
func activationPatterns(reg model.Regressor, input Input, p int, ps []*data.Participant) ([]*mat.Dense, error) {
	return patternsOf(reg.Predict, input, p, ps)
}

// patternsOf returns cov(x_e, s_j) over ps for every edge e of input (the
// raw edges) and every column j of the outputs s that of gives ps, as
// symmetric p × p maps: for input "both" the functional edges' maps of
// every column, then the structural edges'.
func patternsOf(of func([]*data.Participant) (*mat.Dense, error), input Input, p int, ps []*data.Participant) ([]*mat.Dense, error) {
	if len(ps) < 2 {
		return nil, fmt.Errorf("linear: EdgeImportance needs at least two participants, found %d: %w", len(ps), model.ErrTooFewToExplain)
	}
	x, _, err := edgeMatrix(ps, input, p)
	if err != nil {
		return nil, fmt.Errorf("linear: EdgeImportance: %w", err)
	}
	yhat, err := of(ps)
	if err != nil {
		return nil, fmt.Errorf("linear: EdgeImportance: %w", err)
	}
	n, t := yhat.Dims()
	centreColumns(yhat)
	var cov mat.Dense
	cov.Mul(x.T(), yhat) // the column means of x cancel against centred ŷ
	cov.Scale(1/float64(n-1), &cov)
	views, e := inputViews(input), NumEdges(p)
	maps := make([]*mat.Dense, views*t)
	for v := range views {
		for j := range t {
			m := mat.NewDense(p, p, nil)
			for k := range e {
				a, b := EdgePair(p, k)
				val := cov.At(v*e+k, j)
				m.Set(a, b, val)
				m.Set(b, a, val)
			}
			maps[v*t+j] = m
		}
	}
	return maps, nil
}

var (
	_ model.ClassInterpreter = (*Logistic)(nil)
	_ model.ClassInterpreter = (*KernelLogistic)(nil)
)

// EdgeImportance returns the activation patterns of the fitted logistic
// regression over ps (Haufe et al. 2014, NeuroImage 87:96–110): for each
// edge e and decision value c (model.ClassInterpreter),
//
//	a_ec = cov(x_e, s_c) = Σᵢ (x_ie − x̄_e)(s_ic − s̄_c) / (n − 1)
//
// over the n participants of ps, x_ie the raw edge value and s_ic the
// decision value of participant i: for two classes s = f = b + x·w, the
// log-odds of class 1; for K > 2 classes s_c = f_c − (1/K) Σⱼ fⱼ, the
// centred linear function of class c (fⱼ = bⱼ + x·wⱼ), which is log p_c
// less the mean log-probability. Unlike the weights, a pattern shows how
// each edge varies with the decision over the participants. Each map is
// p × p and symmetric with a zero diagonal, in the units of the edge
// times log-odds; for input "both", the functional edges' maps of every
// decision value come first, then the structural edges'. ps needs at
// least two participants.
func (l *Logistic) EdgeImportance(ps []*data.Participant) ([]*mat.Dense, error) {
	if l.weights == nil {
		return nil, errNotFitted
	}
	return patternsOf(l.decisionValues, l.cfg.Input, l.p, ps)
}

// decisionValues returns the len(ps) × model.ExplainedClasses(K) decision
// values of ps (see EdgeImportance).
func (l *Logistic) decisionValues(ps []*data.Participant) (*mat.Dense, error) {
	f, err := l.linearFunctions(ps)
	if err != nil {
		return nil, err
	}
	centreRows(f)
	return f, nil
}

// EdgeImportance returns the activation patterns of the fitted kernel
// logistic regression over ps, a_ec = cov(x_e, s_c) with x_e the raw edge
// (not the normalized vector the correlation kernel compares) and s_c the
// decision values of Logistic.EdgeImportance made of the linear functions
// f(x) = b + Σᵢ k(x, xᵢ)·αᵢ.
func (k *KernelLogistic) EdgeImportance(ps []*data.Participant) ([]*mat.Dense, error) {
	if k.intercept == nil {
		return nil, errNotFitted
	}
	return patternsOf(k.decisionValues, k.cfg.Input, k.p, ps)
}

// decisionValues returns the len(ps) × model.ExplainedClasses(K) decision
// values of ps (see EdgeImportance).
func (k *KernelLogistic) decisionValues(ps []*data.Participant) (*mat.Dense, error) {
	f, err := k.linearFunctions(ps)
	if err != nil {
		return nil, err
	}
	centreRows(f)
	return f, nil
}

// centreRows subtracts from each row of f (n × m) its mean when m > 1: the
// softmax's linear functions become the centred log-probabilities. A
// single column, the binary model's log-odds, is left as it is.
func centreRows(f *mat.Dense) {
	n, m := f.Dims()
	if m < 2 {
		return
	}
	for i := range n {
		row := f.RawRowView(i)
		var mean float64
		for _, v := range row {
			mean += v / float64(m)
		}
		for j := range row {
			row[j] -= mean
		}
	}
}
