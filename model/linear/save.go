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
// weights.npy:
//
//	manifest.json  {"format": "skein-linear", "version": 1, "kind": "mean" or "ridge",
//	               "input": the ridge input ("functional", "structural", "both"),
//	               "p": regions, "alphas": the penalty chosen per target,
//	               "intercept" (ridge) or "means" (mean): one value per target}
//	weights.npy    ridge only: float64, d × T in C order, on the raw edge
//	               scale, rows in the order of Edges (functional edges first
//	               for "both"); prediction = edges · weights + intercept.
//
// Kernel ridge (whose correlation kernel needs the training participants)
// and CPM are not saved.
const (
	linearFormat   = "skein-linear"
	linearVersion  = 1
	linearManifest = "manifest.json"
	linearWeights  = "weights.npy"
)

var errSaveUnfitted = errors.New("linear: Save called before Fit")

type linearManifestJSON struct {
	Format    string    `json:"format"`
	Version   int       `json:"version"`
	Kind      string    `json:"kind"`
	Input     Input     `json:"input,omitempty"`
	P         int       `json:"p,omitempty"`
	Alphas    []float64 `json:"alphas,omitempty"`
	Intercept []float64 `json:"intercept,omitempty"`
	Means     []float64 `json:"means,omitempty"`
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
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := npyio.Write(&buf, w); err != nil {
		return fmt.Errorf("linear: %s: %w", linearWeights, err)
	}
	if err := os.WriteFile(filepath.Join(dir, linearWeights), buf.Bytes(), 0o644); err != nil {
		return err
	}
	return writeManifest(dir, linearManifestJSON{Kind: kindRidge, Input: r.cfg.Input, P: r.p, Alphas: r.alphas, Intercept: r.intercept})
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
		inputs := map[Input]int{InputFunctional: 1, InputStructural: 1, InputBoth: 2}
		if inputs[m.Input] == 0 || d != inputs[m.Input]*NumEdges(m.P) || t != len(m.Intercept) {
			return nil, fmt.Errorf("%s: %d × %d weights do not fit input %q, p = %d and %d intercepts", wpath, d, t, m.Input, m.P, len(m.Intercept))
		}
		for _, b := range m.Intercept {
			if math.IsNaN(b) || math.IsInf(b, 0) {
				return nil, fmt.Errorf("%s: intercept %v", path, b)
			}
		}
		return &Ridge{cfg: RidgeConfig{Input: m.Input}, p: m.P, alphas: m.Alphas, weights: &w, intercept: m.Intercept}, nil
	}
	return nil, fmt.Errorf("%s: %w: kind %q", path, errors.ErrUnsupported, m.Kind)
}
