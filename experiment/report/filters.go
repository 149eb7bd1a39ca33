package report

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"codeberg.org/sbinet/npyio/npz"
	"gonum.org/v1/gonum/stat"
)

// SavedFilters are the first-layer filters of one saved fold network
// (models/NAME/rR-fF/).
type SavedFilters struct {
	Model        string
	Repeat, Fold int
	Regions      []string // from fitted.json; nil when absent
	Branches     []BranchFilters
}

// BranchFilters are the first-layer filters of one branch: Weights[c] is
// the length-p filter of output channel c, averaged over input channels.
// Array names the weight array it came from (for an edge-to-edge layer
// its row filter).
type BranchFilters struct {
	Branch  int
	Array   string
	Weights [][]float64 // channels × p
}

// savedManifest is the part of a saved network's manifest.json (see
// model/graphnet's documentation) that a report reads.
type savedManifest struct {
	Format string `json:"format"`
	P      int    `json:"p"`
	Arrays []struct {
		Name  string `json:"name"`
		Shape []int  `json:"shape"`
	} `json:"arrays"`
}

type savedFitted struct {
	Model   string   `json:"model"`
	Repeat  int      `json:"repeat"`
	Fold    int      `json:"fold"`
	Regions []string `json:"regions"`
}

// readFilters reads the first-layer filters of every saved network under
// dir (models/), sorted by model, repeat and fold. A branch whose first
// layer has no per-region filter (shape (O, C, p)) is left out.
func readFilters(dir string) ([]SavedFilters, error) {
	manifests, err := filepath.Glob(filepath.Join(dir, "*", "*", "manifest.json"))
	if err != nil {
		return nil, err
	}
	var out []SavedFilters
	for _, mpath := range manifests {
		unit := filepath.Dir(mpath)
		raw, err := os.ReadFile(mpath)
		if err != nil {
			return nil, err
		}
		var m savedManifest
		if err := json.Unmarshal(raw, &m); err != nil {
			return nil, fmt.Errorf("%s: %w", mpath, err)
		}
		if m.Format != "skein-graphnet" {
			continue
		}
		s := SavedFilters{Model: filepath.Base(filepath.Dir(unit))}
		fpath := filepath.Join(unit, "fitted.json")
		if raw, err := os.ReadFile(fpath); err == nil {
			var f savedFitted
			if err := json.Unmarshal(raw, &f); err != nil {
				return nil, fmt.Errorf("%s: %w", fpath, err)
			}
			// fitted.json numbers repeats and folds from 1.
			s.Model, s.Repeat, s.Fold, s.Regions = f.Model, f.Repeat-1, f.Fold-1, f.Regions
		} else if !errors.Is(err, fs.ErrNotExist) {
			return nil, err
		} else if _, err := fmt.Sscanf(filepath.Base(unit), "r%d-f%d", &s.Repeat, &s.Fold); err == nil {
			s.Repeat--
			s.Fold--
		}
		wpath := filepath.Join(unit, "weights.npz")
		wraw, err := os.ReadFile(wpath)
		if err != nil {
			return nil, err
		}
		zr, err := npz.NewReader(bytes.NewReader(wraw), int64(len(wraw)))
		if err != nil {
			return nil, fmt.Errorf("%s: not a NumPy .npz archive: %w", wpath, err)
		}
		for _, a := range m.Arrays {
			var b int
			if _, err := fmt.Sscanf(a.Name, "branch%d.layer0.", &b); err != nil {
				continue
			}
			if !strings.HasSuffix(a.Name, ".row") && !strings.HasSuffix(a.Name, ".weight") {
				continue
			}
			if len(a.Shape) != 3 || a.Shape[2] != m.P {
				continue
			}
			w, err := readArray(zr, a.Name+".npy")
			if err != nil {
				return nil, fmt.Errorf("%s: array %q: %w", wpath, a.Name, err)
			}
			o, c, p := a.Shape[0], a.Shape[1], a.Shape[2]
			if len(w) != o*c*p {
				return nil, fmt.Errorf("%s: array %q has %d values, want %d for shape %v", wpath, a.Name, len(w), o*c*p, a.Shape)
			}
			bf := BranchFilters{Branch: b, Array: a.Name, Weights: make([][]float64, o)}
			for ch := range o {
				row := make([]float64, p)
				for in := range c {
					for r := range p {
						row[r] += w[(ch*c+in)*p+r] / float64(c)
					}
				}
				bf.Weights[ch] = row
			}
			s.Branches = append(s.Branches, bf)
		}
		if len(s.Branches) > 0 {
			out = append(out, s)
		}
	}
	sort.Slice(out, func(a, b int) bool {
		return unitLess(out[a].Model, out[a].Repeat, out[a].Fold, out[b].Model, out[b].Repeat, out[b].Fold)
	})
	return out, nil
}

// readArray reads a float32 or float64 array of an .npz archive as float64.
func readArray(zr *npz.Reader, name string) ([]float64, error) {
	var v32 []float32
	if err := zr.Read(name, &v32); err == nil {
		out := make([]float64, len(v32))
		for i, x := range v32 {
			out[i] = float64(x)
		}
		return out, nil
	}
	var v []float64
	err := zr.Read(name, &v)
	return v, err
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
