package train

import (
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/skein-neuro/skein/internal/atomicfile"
	"github.com/skein-neuro/skein/model"
	"gonum.org/v1/gonum/mat"
)

// Checkpoints stores finished units, one JSON file each, so that an
// interrupted run can resume where it stopped.
type Checkpoints struct {
	dir string
}

// NewCheckpoints returns the checkpoints kept in dir (a run's units
// folder): one file NAME/rR-fF.json per finished unit.
func NewCheckpoints(dir string) *Checkpoints { return &Checkpoints{dir: dir} }

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
	// Classes holds the class probabilities of the unit's classifiers
	// (Result.ClassPredictions).
	Classes []unitClasses `json:"class_predictions,omitempty"`
	// LabelLoss holds a baseline's inner validation log loss per label,
	// null for NaN (see Result.LabelLoss).
	LabelLoss []*float64 `json:"label_loss,omitempty"`
	// LabelImportance holds the classifiers' edge importance maps
	// (Result.LabelImportance).
	LabelImportance []unitLabelMap `json:"label_importance,omitempty"`
}

// unitLabelMap is the JSON form of a LabelMap: the map row-major.
type unitLabelMap struct {
	Label string    `json:"label"`
	Class int       `json:"class"` // class index
	View  int       `json:"view"`  // index of the model's importance view
	Map   []float64 `json:"map"`
}

type unitClasses struct {
	ID            string    `json:"participant_id"`
	Label         string    `json:"label"`
	Observed      int       `json:"observed"` // class index
	Probabilities []float64 `json:"probabilities"`
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
	Member    int      `json:"member,omitempty"` // model.Epoch.Member
}

func (c *Checkpoints) path(name string, u Unit) string {
	return filepath.Join(c.dir, unitPath(name, u)+".json")
}

// unitPath names a unit in file paths: NAME/rR-fF with 1-based repeat and
// fold, the model name made safe for a file name (FolderName).
func unitPath(name string, u Unit) string {
	return filepath.Join(FolderName(name), "r"+strconv.Itoa(u.Repeat+1)+"-f"+strconv.Itoa(u.Fold+1))
}

// FolderName returns the name of the folders and files of model name in a
// run folder (models/NAME/, units/NAME/, ...): name with every '/', '\',
// ':' and control character replaced by '_'. Two models whose folder
// names are equal, or equal but for case, would share their files; the
// experiment file refuses such names before a run starts.
func FolderName(name string) string {
	return strings.Map(func(r rune) rune {
		if r == '/' || r == '\\' || r == ':' || r < ' ' {
			return '_'
		}
		return r
	}, name)
}

func (c *Checkpoints) save(name string, u Unit, out unitOutput) error {
	f := unitFile{Model: name, Repeat: u.Repeat + 1, Fold: u.Fold + 1, Predictions: make([]unitPrediction, len(out.predictions))}
	for i, p := range out.predictions {
		f.Predictions[i] = unitPrediction{p.ParticipantID, p.Target, p.Observed, p.Predicted}
	}
	for _, e := range out.history {
		ue := unitEpoch{Epoch: e.Epoch, TrainLoss: e.TrainLoss, Best: e.Best, Member: e.Member}
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
	f.InnerLoss = nullNaN(out.innerLoss)
	for _, c := range out.classes {
		f.Classes = append(f.Classes, unitClasses{c.ParticipantID, c.Label, c.Observed, c.Probabilities})
	}
	f.LabelLoss = nullNaN(out.labelLoss)
	for _, m := range out.labelImportance {
		f.LabelImportance = append(f.LabelImportance, unitLabelMap{m.Label, m.Class, m.View, m.Map.RawMatrix().Data})
	}
	raw, err := json.Marshal(f)
	if err != nil {
		return fmt.Errorf("checkpoint of model %q, repeat %d, fold %d: %w", name, u.Repeat+1, u.Fold+1, err)
	}
	return atomicfile.WriteFile(c.path(name, u), raw)
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
		me := model.Epoch{Epoch: e.Epoch, TrainLoss: e.TrainLoss, ValidLoss: math.NaN(), Best: e.Best, Member: e.Member}
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
	out.innerLoss = nanNull(f.InnerLoss)
	out.labelLoss = nanNull(f.LabelLoss)
	if out.labelImportance, err = labelMaps(f.LabelImportance, path); err != nil {
		return unitOutput{}, false, err
	}
	for _, c := range f.Classes {
		out.classes = append(out.classes, model.ClassPrediction{
			ParticipantID: c.ID, Model: name, Label: c.Label, Repeat: u.Repeat, Fold: u.Fold,
			Observed: c.Observed, Probabilities: c.Probabilities,
		})
	}
	return out, true, nil
}

// labelMaps returns the LabelMaps of a checkpoint's label_importance,
// each checked to be square; path names the file in errors.
func labelMaps(ms []unitLabelMap, path string) ([]LabelMap, error) {
	var out []LabelMap
	for k, m := range ms {
		p := int(math.Round(math.Sqrt(float64(len(m.Map)))))
		if p == 0 || p*p != len(m.Map) {
			return nil, fmt.Errorf("%s: label_importance[%d] (label %q) holds %d values, not a square map", path, k, m.Label, len(m.Map))
		}
		out = append(out, LabelMap{Label: m.Label, Class: m.Class, View: m.View, Map: mat.NewDense(p, p, m.Map)})
	}
	return out, nil
}

// nullNaN returns v with NaN as nil, as JSON holds it; nil for nil.
func nullNaN(v []float64) []*float64 {
	var out []*float64
	for _, x := range v {
		var p *float64
		if !math.IsNaN(x) {
			p = &x
		}
		out = append(out, p)
	}
	return out
}

// nanNull undoes nullNaN.
func nanNull(p []*float64) []float64 {
	var out []float64
	for _, x := range p {
		v := math.NaN()
		if x != nil {
			v = *x
		}
		out = append(out, v)
	}
	return out
}

// A Checkpoint is what the file of a finished unit says beyond its
// predictions, for readers of a run folder.
type Checkpoint struct {
	Model        string
	Repeat, Fold int // from 0
	// Importance holds the unit's edge importance maps, one p × p
	// row-major map per target; nil when the unit computed none.
	Importance [][]float64
	// LabelImportance holds the edge importance maps of the unit's
	// classifiers (Result.LabelImportance); nil when it computed none.
	LabelImportance []LabelMap
}

// ReadCheckpoint reads the checkpoint file at path (one of the files
// Checkpoints keeps).
func ReadCheckpoint(path string) (*Checkpoint, error) {
	raw, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var f unitFile
	if err := json.Unmarshal(raw, &f); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if f.Repeat < 1 || f.Fold < 1 {
		return nil, fmt.Errorf("%s: repeat %d, fold %d: checkpoints number repeats and folds from 1", path, f.Repeat, f.Fold)
	}
	labelMaps, err := labelMaps(f.LabelImportance, path)
	if err != nil {
		return nil, err
	}
	return &Checkpoint{Model: f.Model, Repeat: f.Repeat - 1, Fold: f.Fold - 1, Importance: f.Importance, LabelImportance: labelMaps}, nil
}
