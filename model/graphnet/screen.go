package graphnet

import (
	"cmp"
	"fmt"
	"math"
	"slices"
)

// fitScreens chooses, for every branch with a screen (BranchConfig.Screen),
// the edges of each view that it keeps, from the inputs and scores of the
// training set s, and stores them in n.screens; a branch without a screen,
// or whose screen keeps every edge, gets nil.
//
// For view c and edge i < j, with x_k the value of participant k and y_kt
// its score t, over the m_t participants whose score t is present,
//
//	r_t = Σ_k (x_k − x̄)(y_kt − ȳ_t) / sqrt(Σ_k (x_k − x̄)² · Σ_k (y_kt − ȳ_t)²)
//
// (Pearson's r; 0 when either sum of squares is 0), and the edge's score
// is max_t |r_t|. For a network fitted to a label (s.labels set), the
// edge's score is instead its correlation ratio with the class,
// η = sqrt(SS_between/SS_total) (correlationRatio), which for two classes
// is |Pearson r| with the class coded 0/1 (the point-biserial
// correlation) and which ranks edges as the one-way ANOVA F statistic
// does. The Screen edges of largest score are kept, ties broken by the
// lower index i·p + j.
func (n *Network) fitScreens(s *prepared) {
	n.screens = make([][]int, len(n.cfg.Branches))
	p, pp := n.p, n.p*n.p
	edges := p * (p - 1) / 2
	for bi, b := range n.cfg.Branches {
		if b.Screen == 0 || b.Screen >= edges {
			continue
		}
		views := len(b.views())
		type scored struct {
			flat  int // c·p² + i·p + j
			score float64
		}
		var keep []int
		for c := range views {
			all := make([]scored, 0, edges)
			for i := range p {
				for j := i + 1; j < p; j++ {
					all = append(all, scored{flat: c*pp + i*p + j})
				}
			}
			if s.labels != nil {
				xs := make([]float64, s.len())
				for e := range all {
					for k := range xs {
						xs[k] = s.inputs[bi][k][all[e].flat]
					}
					all[e].score = correlationRatio(xs, s.labels, n.classes)
				}
			}
			for t := range n.targets {
				if s.labels != nil {
					break
				}
				var ys []float64
				var rows []int
				for k := range s.len() {
					if y := s.y[k*n.targets+t]; !math.IsNaN(y) {
						ys = append(ys, y)
						rows = append(rows, k)
					}
				}
				if len(ys) < 2 {
					continue
				}
				ym := mean(ys)
				var syy float64
				for _, y := range ys {
					syy += (y - ym) * (y - ym)
				}
				for e := range all {
					f := all[e].flat
					var xm float64
					for _, k := range rows {
						xm += s.inputs[bi][k][f]
					}
					xm /= float64(len(rows))
					var sxy, sxx float64
					for r, k := range rows {
						d := s.inputs[bi][k][f] - xm
						sxy += d * (ys[r] - ym)
						sxx += d * d
					}
					if sxx > 0 && syy > 0 {
						all[e].score = max(all[e].score, math.Abs(sxy)/math.Sqrt(sxx*syy))
					}
				}
			}
			slices.SortStableFunc(all, func(a, b scored) int { return cmp.Compare(b.score, a.score) })
			for _, e := range all[:b.Screen] {
				keep = append(keep, e.flat)
			}
		}
		slices.Sort(keep)
		n.screens[bi] = keep
	}
}

// correlationRatio returns the correlation ratio η of the values x with
// the classes labels, each in [0, classes) (Pearson 1903):
//
//	η² = SS_between / SS_total = Σ_k n_k (x̄_k − x̄)² / Σ_i (x_i − x̄)²,
//
// with n_k the number and x̄_k the mean of the values of class k; 0 when
// SS_total is 0. For n values in K classes the one-way ANOVA F statistic is
// F = (η²/(K − 1)) / ((1 − η²)/(n − K)), increasing in η, and for K = 2, η
// is the absolute point-biserial correlation. x and labels have the same
// length.
func correlationRatio(x []float64, labels []int, classes int) float64 {
	if len(x) != len(labels) {
		panic("graphnet: correlation ratio of slices of different lengths")
	}
	if len(x) == 0 {
		return 0
	}
	xm := mean(x)
	sums := make([]float64, classes)
	counts := make([]int, classes)
	var sst float64
	for i, v := range x {
		sums[labels[i]] += v
		counts[labels[i]]++
		sst += (v - xm) * (v - xm)
	}
	if sst == 0 {
		return 0
	}
	var ssb float64
	for k, c := range counts {
		if c > 0 {
			d := sums[k]/float64(c) - xm
			ssb += float64(c) * d * d
		}
	}
	return math.Sqrt(min(ssb/sst, 1))
}

// mean returns the arithmetic mean of xs, which must not be empty.
func mean(xs []float64) float64 {
	var s float64
	for _, x := range xs {
		s += x
	}
	return s / float64(len(xs))
}

// applyScreens replaces the inputs of s of every screened branch by
// copies in which only the kept edges, (i, j) and (j, i) for each kept
// i < j, hold their values and every other entry is 0.
func (n *Network) applyScreens(s *prepared) {
	p, pp := n.p, n.p*n.p
	for bi, keep := range n.screens {
		if keep == nil {
			continue
		}
		for k, x := range s.inputs[bi] {
			out := make([]float64, len(x))
			for _, f := range keep {
				c, ij := f/pp, f%pp
				i, j := ij/p, ij%p
				ji := c*pp + j*p + i
				out[f], out[ji] = x[f], x[ji]
			}
			s.inputs[bi][k] = out
		}
	}
}

// checkScreens reports whether screens, as read from a saved network,
// fit the network's branches: one list per branch, nil for a branch
// without a screen, each of at most Screen sorted indices c·p² + i·p + j
// of edges i < j of its views.
func (n *Network) checkScreens(screens [][]int) error {
	if screens == nil {
		return nil
	}
	if len(screens) != len(n.cfg.Branches) {
		return fmt.Errorf("%d screens for %d branches", len(screens), len(n.cfg.Branches))
	}
	p, pp := n.p, n.p*n.p
	for bi, keep := range screens {
		views := len(n.cfg.Branches[bi].views())
		if len(keep) > views*n.cfg.Branches[bi].Screen {
			return fmt.Errorf("screens[%d]: %d edges, the branch keeps at most %d", bi, len(keep), views*n.cfg.Branches[bi].Screen)
		}
		for e, f := range keep {
			if f < 0 || f >= views*pp || (f%pp)/p >= (f%pp)%p || (e > 0 && keep[e-1] >= f) {
				return fmt.Errorf("screens[%d][%d]: %d is not an edge i < j of %d views of %d regions in increasing order", bi, e, f, views, p)
			}
		}
	}
	return nil
}
