package linear

import (
	"context"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/mathext"
	"gonum.org/v1/gonum/stat/distuv"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// CPM is connectome-based predictive modelling (Shen et al. 2017, Nature
// Protocols). For each score column, on the training fold only:
//
//  1. every edge is correlated with the score over the participants whose
//     score is present (Pearson r, or Spearman's rank correlation);
//  2. the edges whose two-sided p-value is below p_threshold are selected,
//     p from Student's t distribution of t = r·√((n−2)/(1−r²)) with n − 2
//     degrees of freedom: those with r > 0 form the positive network,
//     those with r < 0 the negative network;
//  3. each participant's positive and negative strengths are the sums of
//     their selected edges (over the upper triangle);
//  4. the score is fitted by least squares on the strengths the network
//     key names: y ~ b₀ + b₊·pos + b₋·neg for "both", y ~ b₀ + b₊·pos for
//     "positive", y ~ b₀ + b₋·neg for "negative".
//
// A network that selects no edge drops out of the fit (with none left the
// model predicts the training mean). An edge constant over the training
// fold has r = 0 and is never selected. Columns are independent and the
// correlations of all columns sharing a missing-score pattern come from one
// matrix product, so CPM is a model.ColumnWise.
type CPM struct {
	cfg CPMConfig

	p        int
	positive [][]int      // per column: selected edges with r > 0, ascending
	negative [][]int      // per column: selected edges with r < 0, ascending
	coef     [][3]float64 // per column: b₀, b₊, b₋ (zero for a term not fitted)
}

// NewCPM returns an unfitted CPM model. cfg must be valid with its
// defaults set (see Config).
func NewCPM(cfg CPMConfig) *CPM { return &CPM{cfg: cfg} }

// FitsColumnsIndependently marks CPM as a model.ColumnWise.
func (*CPM) FitsColumnsIndependently() {}

// minCPMScores is the fewest present scores a column needs: n − 2 ≥ 2
// degrees of freedom for the correlation test and one more score than
// coefficients in the fit.
const minCPMScores = 4

// Fit selects the networks and fits the strengths on train and valid
// together. A column with fewer than 4 present scores or a constant
// column is an error.
func (c *CPM) Fit(ctx context.Context, train, valid model.Dataset) error {
	ps, y, err := joinDatasets(train, valid)
	if err != nil {
		return err
	}
	x, p, err := edgeMatrix(ps, c.cfg.Input, 0)
	if err != nil {
		return err
	}
	pats, err := missingPatterns(y, minCPMScores)
	if err != nil {
		return err
	}
	_, t := y.Dims()
	c.p = p
	c.positive = make([][]int, t)
	c.negative = make([][]int, t)
	c.coef = make([][3]float64, t)
	for _, pat := range pats {
		if err := ctx.Err(); err != nil {
			return err
		}
		xFit := subMatrix(x, pat.rows, nil)
		corr := newEdgeCorrelator(xFit, c.cfg.Correlation == CorrelationSpearman)
		rCrit := CriticalR(len(pat.rows), *c.cfg.PThreshold)
		// Columns go through in chunks to bound the d × chunk correlations.
		const chunk = 64
		for first := 0; first < len(pat.cols); first += chunk {
			cols := pat.cols[first:min(first+chunk, len(pat.cols))]
			yFit := subMatrix(y, pat.rows, cols)
			r, err := corr.correlate(yFit, cols)
			if err != nil {
				return err
			}
			d, _ := r.Dims()
			for a, j := range cols {
				var pos, neg []int
				for k := 0; k < d; k++ {
					v := r.At(k, a)
					if !selected(v, rCrit, len(pat.rows), *c.cfg.PThreshold) {
						continue
					}
					if v > 0 {
						pos = append(pos, k)
					} else {
						neg = append(neg, k)
					}
				}
				if c.cfg.Network == NetworkNegative {
					pos = nil
				}
				if c.cfg.Network == NetworkPositive {
					neg = nil
				}
				c.positive[j], c.negative[j] = pos, neg
				coef, err := fitStrengths(xFit, mat.Col(nil, a, yFit), pos, neg)
				if err != nil {
					return fmt.Errorf("linear: cpm: score column %d: %w", j+1, err)
				}
				c.coef[j] = coef
			}
		}
	}
	return nil
}

// An edgeCorrelator correlates the edges of a set of participants with
// their scores: the edges (ranked for Spearman) centred on their means,
// and their norms.
type edgeCorrelator struct {
	x        *mat.Dense // n × d
	norms    []float64  // d
	spearman bool
}

func newEdgeCorrelator(x *mat.Dense, spearman bool) edgeCorrelator {
	x = mat.DenseCopyOf(x)
	if spearman {
		rankColumns(x)
	}
	centreColumns(x)
	return edgeCorrelator{x: x, norms: columnNorms(x), spearman: spearman}
}

// correlate returns the d × c correlations (Pearson, or Spearman's of the
// ranks) of the edges with y's c columns; cols names those columns for
// errors. An edge constant over the participants has r = 0.
func (e edgeCorrelator) correlate(y *mat.Dense, cols []int) (*mat.Dense, error) {
	y = mat.DenseCopyOf(y)
	if e.spearman {
		rankColumns(y)
	}
	centreColumns(y)
	yNorm := columnNorms(y)
	for a, v := range yNorm {
		if v == 0 {
			return nil, fmt.Errorf("linear: cpm: score column %d is constant over the training fold", cols[a]+1)
		}
	}
	var r mat.Dense
	r.Mul(e.x.T(), y)
	d, t := r.Dims()
	for k := 0; k < d; k++ {
		row := r.RawRowView(k)
		for a := 0; a < t; a++ {
			if e.norms[k] == 0 {
				row[a] = 0
				continue
			}
			row[a] /= e.norms[k] * yNorm[a]
		}
	}
	return &r, nil
}

// selected reports whether a correlation r over n observations has a
// two-sided p-value below pThreshold. rCrit is CriticalR(n, pThreshold);
// gonum's t quantile is accurate to about 1e-9, so within 1e-6 of it the
// p-value itself decides.
func selected(r, rCrit float64, n int, pThreshold float64) bool {
	switch a := math.Abs(r); {
	case a > rCrit*(1+1e-6):
		return true
	case a < rCrit*(1-1e-6):
		return false
	}
	return PValue(r, n) < pThreshold
}

// PValue returns the two-sided p-value of a correlation r over n
// observations under Student's t distribution with n − 2 degrees of
// freedom: p = I₁₋ᵣ²((n−2)/2, 1/2), I the regularized incomplete beta
// function. It panics if n < 3.
func PValue(r float64, n int) float64 {
	if n < 3 {
		panic(fmt.Sprintf("linear: PValue with %d observations, need at least 3", n))
	}
	if math.Abs(r) >= 1 {
		return 0
	}
	return mathext.RegIncBeta(float64(n-2)/2, 0.5, 1-r*r)
}

// CriticalR returns the |r| above which a correlation over n observations
// has a two-sided p-value below pThreshold under Student's t distribution
// with n − 2 degrees of freedom: r = t/√(n − 2 + t²), t the 1 − pThreshold/2
// quantile. It panics if n < 3.
func CriticalR(n int, pThreshold float64) float64 {
	if n < 3 {
		panic(fmt.Sprintf("linear: CriticalR with %d observations, need at least 3", n))
	}
	df := float64(n - 2)
	tCrit := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(1 - pThreshold/2)
	return tCrit / math.Sqrt(df+tCrit*tCrit)
}

func columnNorms(m *mat.Dense) []float64 {
	_, c := m.Dims()
	norms := make([]float64, c)
	for j := range norms {
		norms[j] = mat.Norm(m.ColView(j), 2)
	}
	return norms
}

// rankColumns replaces each column of m by its ranks, 1 to n, ties
// getting their mean rank.
func rankColumns(m *mat.Dense) {
	n, c := m.Dims()
	order := make([]int, n)
	col := make([]float64, n)
	for j := 0; j < c; j++ {
		mat.Col(col, j, m)
		for i := range order {
			order[i] = i
		}
		sort.Slice(order, func(a, b int) bool { return col[order[a]] < col[order[b]] })
		for start := 0; start < n; {
			end := start + 1
			for end < n && col[order[end]] == col[order[start]] {
				end++
			}
			rank := float64(start+end+1) / 2 // mean of ranks start+1 .. end
			for _, i := range order[start:end] {
				m.Set(i, j, rank)
			}
			start = end
		}
	}
}

// strengths returns Σₖ x[i, k] over the edges k for every row i of x.
func strengths(x *mat.Dense, edges []int) []float64 {
	n, _ := x.Dims()
	s := make([]float64, n)
	for i := range s {
		row := x.RawRowView(i)
		for _, k := range edges {
			s[i] += row[k]
		}
	}
	return s
}

// fitStrengths fits y ~ b₀ + b₊·pos + b₋·neg by least squares (SVD), the
// terms of empty networks left out, and returns [b₀, b₊, b₋].
func fitStrengths(x *mat.Dense, y []float64, pos, neg []int) ([3]float64, error) {
	n := len(y)
	terms := [][]float64{make([]float64, n)}
	for i := range terms[0] {
		terms[0][i] = 1
	}
	slot := []int{0}
	if len(pos) > 0 {
		terms = append(terms, strengths(x, pos))
		slot = append(slot, 1)
	}
	if len(neg) > 0 {
		terms = append(terms, strengths(x, neg))
		slot = append(slot, 2)
	}
	design := mat.NewDense(n, len(terms), nil)
	for j, col := range terms {
		design.SetCol(j, col)
	}
	var svd mat.SVD
	if !svd.Factorize(design, mat.SVDThin) {
		return [3]float64{}, fmt.Errorf("least-squares fit of the network strengths did not converge")
	}
	var b mat.Dense
	svd.SolveTo(&b, mat.NewDense(n, 1, y), svd.Rank(1e-12))
	var coef [3]float64
	for j, s := range slot {
		coef[s] = b.At(j, 0)
	}
	return coef, nil
}

// Predict returns len(ps) × T predictions b₀ + b₊·pos + b₋·neg from each
// participant's strengths in the networks selected for each column.
func (c *CPM) Predict(ps []*data.Participant) (*mat.Dense, error) {
	if c.coef == nil {
		return nil, errNotFitted
	}
	if len(ps) == 0 {
		return nil, errNoParticipants
	}
	x, _, err := edgeMatrix(ps, c.cfg.Input, c.p)
	if err != nil {
		return nil, err
	}
	pred := mat.NewDense(len(ps), len(c.coef), nil)
	for j, b := range c.coef {
		pos, neg := strengths(x, c.positive[j]), strengths(x, c.negative[j])
		for i := range ps {
			pred.Set(i, j, b[0]+b[1]*pos[i]+b[2]*neg[i])
		}
	}
	return pred, nil
}

// Selected returns the edges (positions in Edges; for input "both" the
// structural edges follow the functional ones) of column j's positive and
// negative networks from the last Fit. For network = "positive" the
// negative set is empty and vice versa.
func (c *CPM) Selected(j int) (positive, negative []int) {
	return c.positive[j], c.negative[j]
}

// Coefficients returns column j's fitted intercept and the weights of the
// positive and negative strengths (zero for a network not in the fit).
func (c *CPM) Coefficients(j int) (intercept, positive, negative float64) {
	b := c.coef[j]
	return b[0], b[1], b[2]
}
