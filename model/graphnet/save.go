package graphnet

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"slices"

	"codeberg.org/sbinet/npyio/npz"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// The saved-model format; see the package documentation.
const (
	formatName    = "skein-graphnet"
	formatVersion = 1
	manifestFile  = "manifest.json"
	weightsFile   = "weights.npz"
)

// manifest is the JSON document manifest.json of a saved network.
type manifest struct {
	Format  string `json:"format"`
	Version int    `json:"version"`
	Config  Config `json:"config"`
	P       int    `json:"p"`
	Targets int    `json:"targets"`
	// Classes is K for a network of a Classifier (targets = K outputs,
	// the logits), absent for a network fitted to scores.
	Classes   int                 `json:"classes,omitempty"`
	Seed      int64               `json:"seed"`
	DType     DType               `json:"dtype"`
	Operators []data.OperatorKind `json:"operators"`
	Weights   string              `json:"weights"`
	Arrays    []arrayInfo         `json:"arrays"`
	History   []epochRecord       `json:"history"`
	Fitted    json.RawMessage     `json:"fitted,omitempty"`
	// Screens holds the edges each branch's screen keeps, as
	// Network.screens: omitted when no branch is screened.
	Screens [][]int `json:"screens,omitempty"`
}

type arrayInfo struct {
	Name  string `json:"name"`
	Shape []int  `json:"shape"`
}

// epochRecord is a model.Epoch in JSON; a missing validation loss is null.
type epochRecord struct {
	Epoch     int      `json:"epoch"`
	TrainLoss float64  `json:"train_loss"`
	ValidLoss *float64 `json:"valid_loss"`
	Best      bool     `json:"best"`
}

// Save writes the network to the folder dir, creating it if needed, as
// manifest.json and weights.npz (see the package documentation). Files of
// the same names are replaced.
func (n *Network) Save(dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("graphnet: Save: %w", err)
	}
	m := manifest{
		Format: formatName, Version: formatVersion,
		Config: n.cfg, P: n.p, Targets: n.targets, Classes: n.classes, Seed: n.seed, DType: n.cfg.DType,
		Weights: weightsFile,
		Fitted:  n.Fitted,
		History: []epochRecord{},
		Screens: n.screens,
	}
	for _, b := range n.cfg.Branches {
		m.Operators = append(m.Operators, b.Operator)
	}
	for _, e := range n.history {
		r := epochRecord{Epoch: e.Epoch, TrainLoss: e.TrainLoss, Best: e.Best}
		if !math.IsNaN(e.ValidLoss) {
			v := e.ValidLoss
			r.ValidLoss = &v
		}
		m.History = append(m.History, r)
	}
	var weights bytes.Buffer
	w := npz.NewWriter(&weights)
	for _, p := range n.params {
		m.Arrays = append(m.Arrays, arrayInfo{Name: p.name, Shape: p.shape})
		if err := w.Write(p.name+".npy", nest(p.value.Data(), p.shape)); err != nil {
			return fmt.Errorf("graphnet: Save: %s: %w", weightsFile, err)
		}
	}
	if err := w.Close(); err != nil {
		return fmt.Errorf("graphnet: Save: %s: %w", weightsFile, err)
	}
	js, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return fmt.Errorf("graphnet: Save: %s: %w", manifestFile, err)
	}
	if err := os.WriteFile(filepath.Join(dir, weightsFile), weights.Bytes(), 0o644); err != nil {
		return fmt.Errorf("graphnet: Save: %w", err)
	}
	if err := os.WriteFile(filepath.Join(dir, manifestFile), append(js, '\n'), 0o644); err != nil {
		return fmt.Errorf("graphnet: Save: %w", err)
	}
	return nil
}

// nest returns the row-major flat slice as nested slices of the given
// shape, as npyio writes N-dimensional arrays.
func nest(flat any, shape []int) any {
	v := reflect.ValueOf(flat)
	var build func(off int, shape []int) reflect.Value
	build = func(off int, shape []int) reflect.Value {
		if len(shape) == 1 {
			return v.Slice(off, off+shape[0])
		}
		stride := 1
		for _, s := range shape[1:] {
			stride *= s
		}
		first := build(off, shape[1:])
		out := reflect.MakeSlice(reflect.SliceOf(first.Type()), shape[0], shape[0])
		out.Index(0).Set(first)
		for i := 1; i < shape[0]; i++ {
			out.Index(i).Set(build(off+i*stride, shape[1:]))
		}
		return out
	}
	return build(0, shape).Interface()
}

// Load reads a network saved by Save from the folder dir. A file that is
// missing, corrupt, of another format or version, or that does not match
// its manifest gives an error naming the file, and so does a network of a
// Classifier (read it with LoadClassifier).
func Load(dir string) (*Network, error) {
	n, err := loadNetwork(dir)
	if err != nil {
		return nil, err
	}
	if n.classes > 0 {
		return nil, fmt.Errorf("graphnet: Load: %s: a classifier of %d classes; read it with LoadClassifier", filepath.Join(dir, manifestFile), n.classes)
	}
	return n, nil
}

// loadNetwork reads a network saved by Save, fitted to scores or to a
// label (see Load).
func loadNetwork(dir string) (*Network, error) {
	mpath := filepath.Join(dir, manifestFile)
	raw, err := os.ReadFile(mpath)
	if err != nil {
		return nil, fmt.Errorf("graphnet: Load: %w", err)
	}
	var head struct {
		Format  string `json:"format"`
		Version int    `json:"version"`
	}
	if err := json.Unmarshal(raw, &head); err != nil {
		return nil, fmt.Errorf("graphnet: Load: %s: not a JSON manifest: %w", mpath, err)
	}
	if head.Format != formatName {
		return nil, fmt.Errorf("graphnet: Load: %s: format %q, want %q", mpath, head.Format, formatName)
	}
	if head.Version != formatVersion {
		return nil, fmt.Errorf("graphnet: Load: %s: format version %d, this skein reads version %d", mpath, head.Version, formatVersion)
	}
	var m manifest
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&m); err != nil {
		return nil, fmt.Errorf("graphnet: Load: %s: %w", mpath, err)
	}
	if m.DType != m.Config.DType {
		return nil, fmt.Errorf("graphnet: Load: %s: dtype %q differs from config.dtype %q", mpath, m.DType, m.Config.DType)
	}
	if m.Classes != 0 && (m.Classes < 2 || m.Classes != m.Targets) {
		return nil, fmt.Errorf("graphnet: Load: %s: classes %d with %d targets; want classes = targets ≥ 2, or no classes", mpath, m.Classes, m.Targets)
	}
	if m.P < 1 || m.Targets < 1 {
		return nil, fmt.Errorf("graphnet: Load: %s: need p ≥ 1 and targets ≥ 1, found p = %d, targets = %d", mpath, m.P, m.Targets)
	}
	n, err := newNetwork(m.Config, m.P, m.Targets, m.Classes, m.Seed)
	if err != nil {
		return nil, fmt.Errorf("graphnet: Load: %s: %w", mpath, err)
	}
	if len(m.Arrays) != len(n.params) {
		return nil, fmt.Errorf("graphnet: Load: %s: %d arrays listed, the config has %d", mpath, len(m.Arrays), len(n.params))
	}
	for i, p := range n.params {
		if a := m.Arrays[i]; a.Name != p.name || !slices.Equal(a.Shape, p.shape) {
			return nil, fmt.Errorf("graphnet: Load: %s: arrays[%d] is %s %v, the config gives %s %v", mpath, i, a.Name, a.Shape, p.name, []int(p.shape))
		}
	}
	wpath := filepath.Join(dir, m.Weights)
	if m.Weights != weightsFile {
		return nil, fmt.Errorf("graphnet: Load: %s: weights %q, want %q", mpath, m.Weights, weightsFile)
	}
	wraw, err := os.ReadFile(wpath)
	if err != nil {
		return nil, fmt.Errorf("graphnet: Load: %w", err)
	}
	r, err := npz.NewReader(bytes.NewReader(wraw), int64(len(wraw)))
	if err != nil {
		return nil, fmt.Errorf("graphnet: Load: %s: not a NumPy .npz archive: %w", wpath, err)
	}
	for _, p := range n.params {
		h := r.Header(p.name + ".npy")
		if h == nil {
			return nil, fmt.Errorf("graphnet: Load: %s: array %q is missing or unreadable", wpath, p.name)
		}
		if !slices.Equal(h.Descr.Shape, p.shape) {
			return nil, fmt.Errorf("graphnet: Load: %s: array %q has shape %v, want %v", wpath, p.name, h.Descr.Shape, []int(p.shape))
		}
		if err := readInto(r, p.name+".npy", p.value.Data()); err != nil {
			return nil, fmt.Errorf("graphnet: Load: %s: array %q: %w", wpath, p.name, err)
		}
	}
	for _, e := range m.History {
		ep := model.Epoch{Epoch: e.Epoch, TrainLoss: e.TrainLoss, ValidLoss: math.NaN(), Best: e.Best}
		if e.ValidLoss != nil {
			ep.ValidLoss = *e.ValidLoss
		}
		n.history = append(n.history, ep)
	}
	if err := n.checkScreens(m.Screens); err != nil {
		return nil, fmt.Errorf("graphnet: Load: %s: %w", mpath, err)
	}
	n.screens = m.Screens
	n.Fitted = m.Fitted
	return n, nil
}

// readInto reads the named array into dst, a []float32 or []float64 of the
// array's size.
func readInto(r *npz.Reader, name string, dst any) error {
	switch d := dst.(type) {
	case []float64:
		var v []float64
		if err := r.Read(name, &v); err != nil {
			return err
		}
		if len(v) != len(d) {
			return fmt.Errorf("%d values, want %d", len(v), len(d))
		}
		copy(d, v)
	case []float32:
		var v []float32
		if err := r.Read(name, &v); err != nil {
			return err
		}
		if len(v) != len(d) {
			return fmt.Errorf("%d values, want %d", len(v), len(d))
		}
		copy(d, v)
	default:
		return errors.New("weights are neither float32 nor float64")
	}
	return nil
}
