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

// A saved baseline is a folder holding manifest.json and, for ridge,
// kernel ridge, logistic and kernel logistic, weights.npy:
//
//	manifest.json  {"format": "skein-linear", "version": 1,
//	               "kind": "mean", "ridge", "kernel_ridge", "cpm", "majority",
//	               "logistic" or "kernel_logistic",
//	               "input": the edges read ("functional", "structural", "both"),
//	               "kernel": the kernel of kernel ridge or kernel logistic
//	               ("linear", "correlation"),
//	               "p": regions, "alphas": the penalty chosen per target
//	               (logistic: [the chosen C]; kernel logistic: [the chosen alpha]),
//	               "intercept" (ridge, kernel ridge) or "means" (mean): one value per target,
//	               "positive", "negative" (cpm): per target, the selected edges
//	               (positions in Edges, ascending),
//	               "coef" (cpm): per target, [b₀, b₊, b₋],
//	               "classes" (majority, logistic, kernel logistic): K,
//	               "frequencies" (majority): the K training class frequencies,
//	               "intercept" (logistic, kernel logistic): m values, m = 1
//	               for K = 2 (binary model) and K otherwise (softmax)}
//	weights.npy    float64 in C order, rows in the order of Edges (functional
//	               edges first for "both"); ridge and kernel ridge d × T,
//	               prediction = z · weights + intercept; logistic and kernel
//	               logistic d × m, linear functions f = z · weights + intercept,
//	               P(class 1) = σ(f) for m = 1, softmax(f) otherwise. z is the
//	               raw edges for ridge, logistic and the linear kernel, and for
//	               the correlation kernel the edges centred and scaled to unit
//	               length per participant.
//
// Kernel ridge and kernel logistic are saved in their primal form,
// W = Xᵀα (Weights), so that the folder holds no training participant's
// edges; CPM as its selected networks and strength coefficients.
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

	_ model.Classifier = (*Majority)(nil)
	_ model.Classifier = (*Logistic)(nil)
	_ model.Classifier = (*KernelLogistic)(nil)
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
	Classes   int          `json:"classes,omitempty"`
	Frequency []float64    `json:"frequencies,omitempty"`
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

// Save writes the fitted majority-class predictor to the folder dir: its
// class frequencies.
func (m *Majority) Save(dir string) error {
	if m.freq == nil {
		return errSaveUnfitted
	}
	return writeManifest(dir, linearManifestJSON{Kind: kindMajority, Classes: m.classes, Frequency: m.freq})
}

// Save writes the fitted logistic regression to the folder dir: its
// weights on the raw edge scale (Weights), intercepts and chosen C. The
// loaded model predicts exactly what this one does.
func (l *Logistic) Save(dir string) error {
	if l.weights == nil {
		return errSaveUnfitted
	}
	if err := writeWeights(dir, l.weights); err != nil {
		return err
	}
	return writeManifest(dir, linearManifestJSON{Kind: kindLogistic, Input: l.cfg.Input, P: l.p,
		Alphas: []float64{l.c}, Intercept: l.intercept, Classes: l.classes})
}

// Save writes the fitted kernel logistic regression to the folder dir in
// its primal form (Weights and Intercept), without the training
// participants' edges. The loaded model predicts the same up to rounding.
func (k *KernelLogistic) Save(dir string) error {
	w := k.Weights()
	if w == nil {
		return errSaveUnfitted
	}
	if err := writeWeights(dir, w); err != nil {
		return err
	}
	return writeManifest(dir, linearManifestJSON{Kind: kindKernelLogistic, Input: k.cfg.Input, Kernel: k.cfg.Kernel,
		P: k.p, Alphas: []float64{k.alpha}, Intercept: k.intercept, Classes: k.classes})
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

// LoadClassifier reads a classification baseline (majority, logistic or
// kernel logistic) saved by its Save from the folder dir. A file of an
// unknown format or version, a baseline for scores, or weights that do not
// match the manifest are errors naming the file.
func LoadClassifier(dir string) (model.Classifier, error) { return loadClassifier(dir, "") }

// loadClassifier is LoadClassifier, refusing a baseline of another kind
// than want unless want is empty.
func loadClassifier(dir, want string) (model.Classifier, error) {
	path := filepath.Join(dir, linearManifest)
	m, err := readManifest(path, want)
	if err != nil {
		return nil, err
	}
	switch m.Kind {
	case kindMajority:
		if m.Classes < 2 || len(m.Frequency) != m.Classes {
			return nil, fmt.Errorf("%s: %d frequencies for %d classes, want as many and at least 2", path, len(m.Frequency), m.Classes)
		}
		return &Majority{classes: m.Classes, freq: m.Frequency}, nil
	case kindLogistic, kindKernelLogistic:
		if m.Classes < 2 || len(m.Intercept) != outputs(m.Classes) || len(m.Alphas) != 1 {
			return nil, fmt.Errorf("%s: %d intercepts and %d penalties for %d classes, want classes ≥ 2, %d intercepts and 1 penalty",
				path, len(m.Intercept), len(m.Alphas), m.Classes, outputs(max(m.Classes, 2)))
		}
		w, err := readWeights(dir, path, m)
		if err != nil {
			return nil, err
		}
		if m.Kind == kindLogistic {
			return &Logistic{cfg: LogisticConfig{Input: m.Input}, classes: m.Classes, p: m.P, c: m.Alphas[0],
				weights: w, intercept: m.Intercept, converged: true}, nil
		}
		if m.Kernel != KernelLinear && m.Kernel != KernelCorrelation {
			return nil, fmt.Errorf("%s: kernel %q, want %q or %q", path, m.Kernel, KernelLinear, KernelCorrelation)
		}
		return &KernelLogistic{cfg: KernelLogisticConfig{Input: m.Input, Kernel: m.Kernel}, classes: m.Classes, p: m.P,
			alpha: m.Alphas[0], primal: w, intercept: m.Intercept, converged: true}, nil
	}
	return nil, fmt.Errorf("%s: %w: kind %q is not a classifier", path, errors.ErrUnsupported, m.Kind)
}

// readManifest reads and checks the manifest at path, refusing a
// baseline of another kind than want unless want is empty.
func readManifest(path, want string) (linearManifestJSON, error) {
	var m linearManifestJSON
	raw, err := os.ReadFile(path)
	if err != nil {
		return m, err
	}
	if err := json.Unmarshal(raw, &m); err != nil {
		return m, fmt.Errorf("%s: %w", path, err)
	}
	if m.Format != linearFormat || m.Version != linearVersion {
		return m, fmt.Errorf("%s: format %q version %d, want %s version %d", path, m.Format, m.Version, linearFormat, linearVersion)
	}
	if want != "" && m.Kind != want {
		return m, fmt.Errorf("%s: holds a saved %s model, not %s", path, m.Kind, want)
	}
	return m, nil
}

// Load reads a baseline saved by Save from the folder dir. A file of an
// unknown format or version, or weights that do not match the manifest,
// are errors naming the file.
func Load(dir string) (model.Regressor, error) { return load(dir, "") }

// load is Load, refusing a baseline of another kind than want unless want
// is empty.
func load(dir, want string) (model.Regressor, error) {
	path := filepath.Join(dir, linearManifest)
	m, err := readManifest(path, want)
	if err != nil {
		return nil, err
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
