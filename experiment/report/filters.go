package report

import (
	"fmt"
	"math"
	"path/filepath"
	"sort"

	"github.com/skein-neuro/skein/model/graphnet"
	"github.com/skein-neuro/skein/train"
	"gonum.org/v1/gonum/stat"
)

// SavedFilters are the first-layer filters of one saved fold network
// (models/NAME/rR-fF/).
type SavedFilters struct {
	Model        string
	Repeat, Fold int
	Regions      []string // from fitted.json; nil when absent
	Branches     []graphnet.Filters
}

// readFilters reads the first-layer filters of every saved fold network
// under dir (models/), through train.LoadModel, sorted by model, repeat
// and fold. Of an ensemble, the filters of member 1 stand for the fold
// (graphnet.Ensemble.FirstLayerFilters). Networks refitted on all
// participants, other kinds, and branches whose first layer has no
// per-region filter are left out.
func readFilters(dir string) ([]SavedFilters, error) {
	fitted, err := filepath.Glob(filepath.Join(dir, "*", "*", train.FittedFile))
	if err != nil {
		return nil, err
	}
	var out []SavedFilters
	for _, path := range fitted {
		saved, err := train.LoadModel(filepath.Dir(path))
		if err != nil {
			return nil, err
		}
		net, ok := saved.Model.(interface{ FirstLayerFilters() []graphnet.Filters })
		if !ok || saved.Fitted.Repeat < 1 {
			continue
		}
		// fitted.json numbers repeats and folds from 1.
		s := SavedFilters{Model: saved.Fitted.Model, Repeat: saved.Fitted.Repeat - 1, Fold: saved.Fitted.Fold - 1,
			Regions: saved.Fitted.Regions, Branches: net.FirstLayerFilters()}
		if len(s.Branches) > 0 {
			out = append(out, s)
		}
	}
	sort.Slice(out, func(a, b int) bool {
		return unitLess(out[a].Model, out[a].Repeat, out[a].Fold, out[b].Model, out[b].Repeat, out[b].Fold)
	})
	return out, nil
}

// MatchFilters matches the filters of each fold to those of the first
// fold by correlation — the assignment maximizing the summed Pearson r,
// found by the Hungarian method (Assign) — and averages matched filters.
// Every element of folds is one fold's channels × p filters; all must have
// the same shape.
func MatchFilters(folds [][][]float64) (mean [][]float64, consistency []float64) {
	if len(folds) == 0 {
		return nil, nil
	}
	ref := folds[0]
	o := len(ref)
	aligned := make([][][]float64, len(folds))
	aligned[0] = ref
	for f := 1; f < len(folds); f++ {
		cost := make([][]float64, o)
		for i := range o {
			cost[i] = make([]float64, o)
			for j := range o {
				cost[i][j] = -correlation(ref[i], folds[f][j])
			}
		}
		assign := Assign(cost)
		aligned[f] = make([][]float64, o)
		for i, j := range assign {
			aligned[f][i] = folds[f][j]
		}
	}
	p := len(ref[0])
	mean = make([][]float64, o)
	consistency = make([]float64, o)
	for c := range o {
		mean[c] = make([]float64, p)
		for _, a := range aligned {
			for r, v := range a[c] {
				mean[c][r] += v / float64(len(aligned))
			}
		}
		if len(aligned) < 2 {
			consistency[c] = math.NaN()
			continue
		}
		var sum float64
		for _, a := range aligned {
			others := make([]float64, p)
			for r := range p {
				others[r] = (mean[c][r]*float64(len(aligned)) - a[c][r]) / float64(len(aligned)-1)
			}
			sum += correlation(a[c], others)
		}
		consistency[c] = sum / float64(len(aligned))
	}
	return mean, consistency
}

// correlation is Pearson's r, 0 when either vector is constant.
func correlation(x, y []float64) float64 {
	r := stat.Correlation(x, y, nil)
	if math.IsNaN(r) {
		return 0
	}
	return r
}

// Assign solves the square assignment problem: it returns the permutation
// a minimizing Σᵢ cost[i][a[i]], by the Hungarian method (Kuhn 1955,
// Munkres 1957) in the O(n³) form with row and column potentials. cost
// must be n × n with finite entries; Assign panics otherwise.
func Assign(cost [][]float64) []int {
	n := len(cost)
	for i, row := range cost {
		if len(row) != n {
			panic(fmt.Sprintf("report: Assign: row %d has %d costs, want %d", i, len(row), n))
		}
		for _, c := range row {
			if math.IsNaN(c) || math.IsInf(c, 0) {
				panic("report: Assign: cost is not finite")
			}
		}
	}
	// Potentials u (rows) and v (columns), 1-based with a virtual column 0;
	// match[j] is the row matched to column j.
	u := make([]float64, n+1)
	v := make([]float64, n+1)
	match := make([]int, n+1)
	way := make([]int, n+1)
	for i := 1; i <= n; i++ {
		match[0] = i
		j0 := 0
		minv := make([]float64, n+1)
		used := make([]bool, n+1)
		for j := range minv {
			minv[j] = math.Inf(1)
		}
		for {
			used[j0] = true
			i0, delta, j1 := match[j0], math.Inf(1), 0
			for j := 1; j <= n; j++ {
				if used[j] {
					continue
				}
				if cur := cost[i0-1][j-1] - u[i0] - v[j]; cur < minv[j] {
					minv[j], way[j] = cur, j0
				}
				if minv[j] < delta {
					delta, j1 = minv[j], j
				}
			}
			for j := 0; j <= n; j++ {
				if used[j] {
					u[match[j]] += delta
					v[j] -= delta
				} else {
					minv[j] -= delta
				}
			}
			j0 = j1
			if match[j0] == 0 {
				break
			}
		}
		for j0 != 0 {
			j1 := way[j0]
			match[j0] = match[j1]
			j0 = j1
		}
	}
	a := make([]int, n)
	for j := 1; j <= n; j++ {
		a[match[j]-1] = j - 1
	}
	return a
}
