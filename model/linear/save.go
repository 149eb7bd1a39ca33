package linear

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"

	"codeberg.org/sbinet/npyio"
	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/model"
)

// A saved baseline is a folder holding manifest.json and, for ridge and
// kernel ridge, weights.npy:
//
//	manifest.json  {"format": "skein-linear", "version": 1,
//	               "kind": "mean", "ridge", "kernel_ridge" or "cpm",
//	               "input": the edges read ("functional", "structural", "both"),
//	               "kernel": kernel ridge's kernel ("linear", "correlation"),
//	               "p": regions, "alphas": the penalty chosen per target,
//	               "intercept" (ridge, kernel ridge) or "means" (mean): one value per target,
//	               "positive", "negative" (cpm): per target, the selected edges
//	               (positions in Edges, ascending),
//	               "coef" (cpm): per target, [b₀, b₊, b₋]}
//	weights.npy    ridge and kernel ridge: float64, d × T in C order, rows in
//	               the order of Edges (functional edges first for "both");
//	               prediction = z · weights + intercept, z the raw edges for
//	               ridge and the linear kernel, and for the correlation kernel
//	               the edges centred and scaled to unit length per participant.
//
// Kernel ridge is saved in its primal form, W = Xᵀα (KernelRidge.Weights),
// so that the folder holds no training participant's edges; CPM as its
// selected networks and strength coefficients.
const (
	linearFormat   = "skein-linear"
	linearVersion  = 1
	linearManifest = "manifest.json"
	linearWeights  = "weights.npy"
)

var errSaveUnfitted = errors.New("linear: Save called before Fit")

// Every baseline can be saved.
var (
	_ model.Saver = (*Mean)(nil)
	_ model.Saver = (*Ridge)(nil)
	_ model.Saver = (*KernelRidge)(nil)
	_ model.Saver = (*CPM)(nil)
)

type linearManifestJSON struct {
	Format    string       `json:"format"`
	Version   int          `json:"version"`
	Kind      string       `json:"kind"`
	Input     Input        `json:"input,omitempty"`
	Kernel    Kernel       `json:"kernel,omitempty"`
	P         int          `json:"p,omitempty"`
	Alphas    []float64    `json:"alphas,omitempty"`
	Intercept []float64    `json:"intercept,omitempty"`
	Means     []float64    `json:"means,omitempty"`
	Positive  [][]int      `json:"positive,omitempty"`
	Negative  [][]int      `json:"negative,omitempty"`
	Coef      [][3]float64 `json:"coef,omitempty"`
}

// Save writes the fitted mean predictor to the folder dir.
func (m *Mean) Save(dir string) error {
	if m.means == nil {
		return errSaveUnfitted
	}
	return writeManifest(dir, linearManifestJSON{Kind: kindMean, Means: m.means})
}

// Save writes the fitted ridge model to the folder dir: its weights on the
// raw edge scale (Weights) and intercepts. It folds a dual solution into
// those weights, which is what prediction from the folder needs; the
// model predicts the same afterwards, up to rounding.
func (r *Ridge) Save(dir string) error {
	w := r.Weights()
	if w == nil {
		return errSaveUnfitted
	}
	if err := writeWeights(dir, w); err != nil {
		return err
	}
	return writeManifest(dir, linearManifestJSON{Kind: kindRidge, Input: r.cfg.Input, P: r.p, Alphas: r.alphas, Intercept: r.intercept})
}

// Save writes the fitted kernel ridge model to the folder dir in its
// primal form (Weights and Intercept), which is all prediction needs: the
// training participants' edges are not written. The model is not
// changed; the loaded one predicts the same up to rounding (the products
// are taken in another order).
func (k *KernelRidge) Save(dir string) error {
	w := k.Weights()
	if w == nil {
		return errSaveUnfitted
	}
	if err := writeWeights(dir, w); err != nil {
		return err
	}
	return writeManifest(dir, linearManifestJSON{Kind: kindKernelRidge, Input: k.cfg.Input, Kernel: k.cfg.Kernel,
		P: k.p, Alphas: k.alphas, Intercept: k.means})
}

// Save writes the fitted CPM model to the folder dir: each column's
// selected networks and strength coefficients. The loaded model predicts
// exactly what this one does.
func (c *CPM) Save(dir string) error {
	if c.coef == nil {
		return errSaveUnfitted
	}
	return writeManifest(dir, linearManifestJSON{Kind: kindCPM, Input: c.cfg.Input, P: c.p,
		Positive: nonNil(c.positive), Negative: nonNil(c.negative), Coef: c.coef})
}

// nonNil returns sets with every nil set made empty, so that JSON holds
// [] for a network that selected no edge.
func nonNil(sets [][]int) [][]int {
	out := make([][]int, len(sets))
	for j, s := range sets {
		out[j] = s
		if s == nil {
			out[j] = []int{}
		}
	}
	return out
}

func writeWeights(dir string, w *mat.Dense) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := npyio.Write(&buf, w); err != nil {
		return fmt.Errorf("linear: %s: %w", linearWeights, err)
	}
	return os.WriteFile(filepath.Join(dir, linearWeights), buf.Bytes(), 0o644)
}

// readWeights reads weights.npy of dir and checks it against the
// manifest at path: d × T for m.Input's edges at m.P regions and T
// intercepts, all finite.
func readWeights(dir, path string, m linearManifestJSON) (*mat.Dense, error) {
	wpath := filepath.Join(dir, linearWeights)
	f, err := os.Open(wpath)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var w mat.Dense
	if err := npyio.Read(f, &w); err != nil {
		return nil, fmt.Errorf("%s: %w", wpath, err)
	}
	d, t := w.Dims()
	if m.P < 2 || d != inputViews(m.Input)*NumEdges(m.P) || t != len(m.Intercept) {
		return nil, fmt.Errorf("%s: %d × %d weights do not fit input %q, p = %d and %d intercepts", wpath, d, t, m.Input, m.P, len(m.Intercept))
	}
	for _, b := range m.Intercept {
		if math.IsNaN(b) || math.IsInf(b, 0) {
			return nil, fmt.Errorf("%s: intercept %v", path, b)
		}
	}
	return &w, nil
}

// inputViews is the number of matrices input reads: 1 or 2, 0 for a word
// that is not an Input.
func inputViews(input Input) int {
	return map[Input]int{InputFunctional: 1, InputStructural: 1, InputBoth: 2}[input]
}

func writeManifest(dir string, m linearManifestJSON) error {
	m.Format, m.Version = linearFormat, linearVersion
	raw, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	return os.WriteFile(filepath.Join(dir, linearManifest), raw, 0o644)
}

// Load reads a baseline saved by Save from the folder dir. A file of an
// unknown format or version, or weights that do not match the manifest,
// are errors naming the file.
func Load(dir string) (model.Regressor, error) { return load(dir, "") }

// load is Load, refusing a baseline of another kind than want unless want
// is empty.
func load(dir, want string) (model.Regressor, error) {
	path := filepath.Join(dir, linearManifest)
	raw, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var m linearManifestJSON
	if err := json.Unmarshal(raw, &m); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if m.Format != linearFormat || m.Version != linearVersion {
		return nil, fmt.Errorf("%s: format %q version %d, want %s version %d", path, m.Format, m.Version, linearFormat, linearVersion)
	}
	if want != "" && m.Kind != want {
		return nil, fmt.Errorf("%s: holds a saved %s model, not %s", path, m.Kind, want)
	}
	switch m.Kind {
	case kindMean:
		if len(m.Means) == 0 {
			return nil, fmt.Errorf("%s: no means", path)
		}
		return &Mean{means: m.Means}, nil
	case kindRidge:
		w, err := readWeights(dir, path, m)
		if err != nil {
			return nil, err
		}
		return &Ridge{cfg: RidgeConfig{Input: m.Input}, p: m.P, alphas: m.Alphas, weights: w, intercept: m.Intercept}, nil
	case kindKernelRidge:
		if m.Kernel != KernelLinear && m.Kernel != KernelCorrelation {
			return nil, fmt.Errorf("%s: kernel %q, want %q or %q", path, m.Kernel, KernelLinear, KernelCorrelation)
		}
		w, err := readWeights(dir, path, m)
		if err != nil {
			return nil, err
		}
		return &KernelRidge{cfg: KernelRidgeConfig{Input: m.Input, Kernel: m.Kernel}, p: m.P, alphas: m.Alphas,
			primal: w, means: m.Intercept}, nil
	case kindCPM:
		t := len(m.Coef)
		if inputViews(m.Input) == 0 || m.P < 2 || t == 0 || len(m.Positive) != t || len(m.Negative) != t {
			return nil, fmt.Errorf("%s: a cpm model needs input, p ≥ 2 and, per target, positive, negative and coef; found input %q, p = %d, %d, %d and %d", path, m.Input, m.P, len(m.Positive), len(m.Negative), t)
		}
		d := inputViews(m.Input) * NumEdges(m.P)
		for j := range t {
			for _, set := range [][]int{m.Positive[j], m.Negative[j]} {
				for _, e := range set {
					if e < 0 || e >= d {
						return nil, fmt.Errorf("%s: target %d: edge %d outside 0..%d", path, j+1, e, d-1)
					}
				}
			}
			for _, b := range m.Coef[j] {
				if math.IsNaN(b) || math.IsInf(b, 0) {
					return nil, fmt.Errorf("%s: target %d: coefficient %v", path, j+1, b)
				}
			}
		}
		return &CPM{cfg: CPMConfig{Input: m.Input}, p: m.P, positive: m.Positive, negative: m.Negative, coef: m.Coef}, nil
	}
	return nil, fmt.Errorf("%s: %w: kind %q", path, errors.ErrUnsupported, m.Kind)
}
