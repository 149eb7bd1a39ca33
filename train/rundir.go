package train

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/model"
)

// RunDir is the output folder of one run. Everything is first written into
// a sibling work folder, Final + ".partial", and the work folder becomes
// Final only when the run has finished, so a failed or interrupted run
// never touches earlier results. An interrupted run's work folder keeps
// its finished units for OpenRunDir's resume.
type RunDir struct {
	Final   string
	Partial string
	force   bool
}

// ErrRunExists is wrapped by OpenRunDir's error when the output folder
// exists and replacing it was not asked for.
var ErrRunExists = errors.New("output folder exists")

// OpenRunDir prepares the work folder of a run whose results go to final.
// An existing final folder is an error unless force is set, in which case
// it is replaced only when the new run commits. An existing work folder
// (an interrupted run) is an error unless resume is set, which continues
// it, or force, which starts over.
func OpenRunDir(final string, force, resume bool) (*RunDir, error) {
	d := &RunDir{Final: filepath.Clean(final), force: force}
	d.Partial = d.Final + ".partial"
	if _, err := os.Stat(d.Final); err == nil && !force {
		return nil, fmt.Errorf("%s: %w; choose another --out or pass --force to replace it", d.Final, ErrRunExists)
	}
	switch _, err := os.Stat(d.Partial); {
	case err == nil && resume:
	case err == nil && force:
		if err := os.RemoveAll(d.Partial); err != nil {
			return nil, err
		}
	case err == nil:
		return nil, fmt.Errorf("%s holds an interrupted run: pass --resume to finish it or --force to start over", d.Partial)
	case !errors.Is(err, fs.ErrNotExist):
		return nil, err
	case resume:
		return nil, fmt.Errorf("--resume: %s holds no interrupted run", d.Partial)
	}
	if err := os.MkdirAll(filepath.Join(d.Partial, "units"), 0o755); err != nil {
		return nil, err
	}
	return d, nil
}

// WriteFile writes name (a path relative to the run folder) atomically in
// the work folder: into a temporary file, then renamed.
func (d *RunDir) WriteFile(name string, content []byte) error {
	return writeAtomic(filepath.Join(d.Partial, name), content)
}

// Path returns where name will be found once the run is committed.
func (d *RunDir) Path(name string) string { return filepath.Join(d.Final, name) }

// WorkPath returns where name is while the run is being written.
func (d *RunDir) WorkPath(name string) string { return filepath.Join(d.Partial, name) }

// Checkpoints returns the unit checkpoints of the work folder.
func (d *RunDir) Checkpoints() *Checkpoints {
	return &Checkpoints{dir: filepath.Join(d.Partial, "units")}
}

// CheckResume makes sure a resumed run continues the same experiment: the
// resolved experiment file of the work folder, when present, must equal
// resolved.
func (d *RunDir) CheckResume(resolvedName string, resolved []byte) error {
	old, err := os.ReadFile(filepath.Join(d.Partial, resolvedName))
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	if err != nil {
		return err
	}
	if !bytes.Equal(old, resolved) {
		return fmt.Errorf("%s: the interrupted run used another experiment file; pass --force to start over", d.Partial)
	}
	return nil
}

// Commit makes the work folder the run's folder, replacing an earlier one
// when the run was opened with force.
func (d *RunDir) Commit() error {
	var old string
	if _, err := os.Stat(d.Final); err == nil {
		if !d.force {
			return fmt.Errorf("%s: %w", d.Final, ErrRunExists)
		}
		old = fmt.Sprintf("%s.old-%d", d.Final, time.Now().UnixNano())
		if err := os.Rename(d.Final, old); err != nil {
			return err
		}
	}
	if err := os.Rename(d.Partial, d.Final); err != nil {
		if old != "" {
			os.Rename(old, d.Final)
		}
		return err
	}
	if old != "" {
		return os.RemoveAll(old)
	}
	return nil
}

func writeAtomic(path string, content []byte) error {
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return err
	}
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return err
	}
	if _, err := f.Write(content); err != nil {
		f.Close()
		os.Remove(f.Name())
		return err
	}
	if err := f.Close(); err != nil {
		os.Remove(f.Name())
		return err
	}
	if err := os.Rename(f.Name(), path); err != nil {
		os.Remove(f.Name())
		return err
	}
	return nil
}

// Checkpoints stores finished units, one JSON file each, so that an
// interrupted run can resume where it stopped.
type Checkpoints struct {
	dir string
}

// unitFile is the JSON form of a finished unit. Floats survive the round
// trip exactly (encoding/json writes the shortest representation that
// parses back to the same float64). Fields added later are optional, so
// older checkpoints still load.
type unitFile struct {
	Model       string           `json:"model"`
	Repeat      int              `json:"repeat"` // from 1, as in the file's name
	Fold        int              `json:"fold"`   // from 1
	Predictions []unitPrediction `json:"predictions"`
	History     []unitEpoch      `json:"history,omitempty"`
	// Importance holds one row-major p × p map per target.
	Importance [][]float64 `json:"importance,omitempty"`
	// Choices holds, per target, the settings a tuned model chose.
	Choices [][]unitChoice `json:"choices,omitempty"`
	// InnerLoss holds a baseline's inner validation error per target,
	// null for NaN (see Result.InnerLoss).
	InnerLoss []*float64 `json:"inner_loss,omitempty"`
}

type unitChoice struct {
	Setting string  `json:"setting"`
	Value   float64 `json:"value"`
	Min     float64 `json:"min"`
	Max     float64 `json:"max"`
}

type unitPrediction struct {
	ID        string  `json:"participant_id"`
	Target    string  `json:"target"`
	Observed  float64 `json:"observed"`
	Predicted float64 `json:"predicted"`
}

type unitEpoch struct {
	Epoch     int      `json:"epoch"`
	TrainLoss float64  `json:"train_loss"`
	ValidLoss *float64 `json:"valid_loss"` // nil for NaN: no inner validation
	Best      bool     `json:"best"`
}

func (c *Checkpoints) path(name string, u Unit) string {
	return filepath.Join(c.dir, unitPath(name, u)+".json")
}

// unitPath names a unit in file paths: NAME/rR-fF with 1-based repeat and
// fold, the model name made safe for a file name.
func unitPath(name string, u Unit) string {
	safe := strings.Map(func(r rune) rune {
		if r == '/' || r == '\\' || r == ':' || r < ' ' {
			return '_'
		}
		return r
	}, name)
	return filepath.Join(safe, "r"+strconv.Itoa(u.Repeat+1)+"-f"+strconv.Itoa(u.Fold+1))
}

// ModelsDir returns the folder of the work folder where fold models are
// saved.
func (d *RunDir) ModelsDir() string { return filepath.Join(d.Partial, "models") }

func (c *Checkpoints) save(name string, u Unit, out unitOutput) error {
	f := unitFile{Model: name, Repeat: u.Repeat + 1, Fold: u.Fold + 1, Predictions: make([]unitPrediction, len(out.predictions))}
	for i, p := range out.predictions {
		f.Predictions[i] = unitPrediction{p.ParticipantID, p.Target, p.Observed, p.Predicted}
	}
	for _, e := range out.history {
		ue := unitEpoch{Epoch: e.Epoch, TrainLoss: e.TrainLoss, Best: e.Best}
		if !math.IsNaN(e.ValidLoss) {
			v := e.ValidLoss
			ue.ValidLoss = &v
		}
		f.History = append(f.History, ue)
	}
	for _, m := range out.importance {
		f.Importance = append(f.Importance, m.RawMatrix().Data)
	}
	for _, cs := range out.choices {
		uc := make([]unitChoice, len(cs))
		for k, c := range cs {
			uc[k] = unitChoice{c.Setting, c.Value, c.Min, c.Max}
		}
		f.Choices = append(f.Choices, uc)
	}
	for _, v := range out.innerLoss {
		var p *float64
		if !math.IsNaN(v) {
			p = &v
		}
		f.InnerLoss = append(f.InnerLoss, p)
	}
	raw, err := json.Marshal(f)
	if err != nil {
		return fmt.Errorf("checkpoint of model %q, repeat %d, fold %d: %w", name, u.Repeat+1, u.Fold+1, err)
	}
	return writeAtomic(c.path(name, u), raw)
}

func (c *Checkpoints) has(name string, u Unit) bool {
	_, err := os.Stat(c.path(name, u))
	return err == nil
}

func (c *Checkpoints) load(name string, u Unit) (unitOutput, bool, error) {
	path := c.path(name, u)
	raw, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		return unitOutput{}, false, nil
	}
	if err != nil {
		return unitOutput{}, false, err
	}
	var f unitFile
	if err := json.Unmarshal(raw, &f); err != nil {
		return unitOutput{}, false, fmt.Errorf("%s: %w (delete it to retrain the unit)", path, err)
	}
	if f.Model != name || f.Repeat != u.Repeat+1 || f.Fold != u.Fold+1 {
		return unitOutput{}, false, fmt.Errorf("%s: holds model %q repeat %d fold %d (delete it to retrain the unit)", path, f.Model, f.Repeat, f.Fold)
	}
	var out unitOutput
	for _, p := range f.Predictions {
		out.predictions = append(out.predictions, model.Prediction{
			ParticipantID: p.ID, Model: name, Target: p.Target,
			Repeat: u.Repeat, Fold: u.Fold, Observed: p.Observed, Predicted: p.Predicted,
		})
	}
	for _, e := range f.History {
		me := model.Epoch{Epoch: e.Epoch, TrainLoss: e.TrainLoss, ValidLoss: math.NaN(), Best: e.Best}
		if e.ValidLoss != nil {
			me.ValidLoss = *e.ValidLoss
		}
		out.history = append(out.history, me)
	}
	for _, flat := range f.Importance {
		p := int(math.Round(math.Sqrt(float64(len(flat)))))
		if p*p != len(flat) {
			return unitOutput{}, false, fmt.Errorf("%s: an importance map of %d values is not square", path, len(flat))
		}
		out.importance = append(out.importance, mat.NewDense(p, p, flat))
	}
	for _, uc := range f.Choices {
		cs := make([]model.Choice, len(uc))
		for k, c := range uc {
			cs[k] = model.Choice{Setting: c.Setting, Value: c.Value, Min: c.Min, Max: c.Max}
		}
		out.choices = append(out.choices, cs)
	}
	for _, p := range f.InnerLoss {
		v := math.NaN()
		if p != nil {
			v = *p
		}
		out.innerLoss = append(out.innerLoss, v)
	}
	return out, true, nil
}
