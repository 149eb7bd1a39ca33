package report

import (
	"bytes"
	"cmp"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/internal/atomicfile"
	"github.com/skein-neuro/skein/train"
)

// Run is what a finished run folder holds, read back from its files.
type Run struct {
	Dir string
	// Name is the run folder's name: the base of Dir without the
	// ".partial" suffix of a run's work folder, which becomes the run
	// folder when the run is committed.
	Name string
	// Experiment is the resolved experiment file; ExperimentText its text.
	Experiment     *experiment.Experiment
	ExperimentText string
	// Cohort is cohort.json; nil when the file is absent.
	Cohort *data.Report
	// Regions holds the p region labels (nil when p is unknown).
	Regions []string
	// Rows are predictions.csv, Summary metrics.json.
	Rows    []eval.Prediction
	Summary *eval.Summary
	// Comparisons are comparison.csv, each with its Group from Summary,
	// in report order; nil for a run folder made before skein wrote the
	// file.
	Comparisons []eval.Comparison
	// SummaryMarkdown is summary.md.
	SummaryMarkdown string
	// Curves are the rows of learning_curves.csv (nil without the file).
	Curves []CurvePoint
	// Nulls are the scores' null distributions of permutations.csv, and
	// ClassNulls its class labels' null distributions of AUC within folds (nil without
	// a permutation test).
	Nulls      []eval.NullDistribution
	ClassNulls []eval.ClassNullDistribution
	// Versions is versions.txt.
	Versions string
	// Importance holds the edge-importance maps of the unit checkpoints.
	Importance []UnitImportance
	// Networks holds the first-layer filters of the saved fold networks.
	Networks []SavedFilters
	// Labels are the categorical targets of the run, in the order of the
	// experiment's labels, and ClassRows the predictions of
	// class_predictions.csv in report order; both nil for a run without
	// labels (no such file).
	Labels    []LabelTarget
	ClassRows []ClassPrediction
}

// A CurvePoint is one row of learning_curves.csv.
type CurvePoint struct {
	Model                string
	Repeat, Fold, Epoch  int
	TrainLoss, ValidLoss float64 // ValidLoss NaN without inner validation
	Best                 bool
	// Member is the ensemble member (from 1) of the epoch, 0 for a single
	// network and for files written before the member column.
	Member int
}

// UnitImportance is the edge importance one fitted unit reported: one
// p × p row-major map per target, in the order of the experiment's targets
// (per view and target for a model of several importance views), and the
// maps of its classifiers.
type UnitImportance struct {
	Model        string
	Repeat, Fold int
	Maps         [][]float64
	// LabelMaps are the maps of the unit's classifiers, label by label
	// (train.Result.LabelImportance).
	LabelMaps []train.LabelMap
}

// ReadRun reads the run folder dir. experiment.toml, predictions.csv and
// metrics.json are required; every other file is optional and leaves its
// part of Run empty when absent. A file that is present but malformed is
// an error naming it and, where it applies, the line and column.
func ReadRun(dir string) (*Run, error) {
	r := &Run{Dir: dir, Name: strings.TrimSuffix(filepath.Base(filepath.Clean(dir)), ".partial")}
	raw, err := os.ReadFile(filepath.Join(dir, experiment.ExperimentFile))
	if err != nil {
		return nil, fmt.Errorf("%w (is %s a run folder of skein run?)", err, dir)
	}
	r.ExperimentText = string(raw)
	if r.Experiment, err = experiment.ParseExperiment(raw); err != nil {
		return nil, fmt.Errorf("%s: %w", filepath.Join(dir, experiment.ExperimentFile), err)
	}
	r.Experiment.Dir = dir

	path := filepath.Join(dir, experiment.PredictionsFile)
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	r.Rows, _, err = eval.ReadPredictions(f, path)
	f.Close()
	if err != nil {
		return nil, err
	}
	path = filepath.Join(dir, experiment.MetricsFile)
	if raw, err = os.ReadFile(path); err != nil {
		return nil, err
	}
	r.Summary = new(eval.Summary)
	if err := json.Unmarshal(raw, r.Summary); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}

	if raw, ok, err := optional(dir, experiment.CohortFile); err != nil {
		return nil, err
	} else if ok {
		r.Cohort = new(data.Report)
		if err := json.Unmarshal(raw, r.Cohort); err != nil {
			return nil, fmt.Errorf("%s: %w", filepath.Join(dir, experiment.CohortFile), err)
		}
	}
	if raw, ok, err := optional(dir, experiment.ComparisonFile); err != nil {
		return nil, err
	} else if ok {
		if r.Comparisons, err = eval.ReadComparisonCSV(bytes.NewReader(raw), filepath.Join(dir, experiment.ComparisonFile)); err != nil {
			return nil, err
		}
		if r.Comparisons == nil {
			r.Comparisons = []eval.Comparison{} // the file, without rows
		}
		for i := range r.Comparisons {
			c := &r.Comparisons[i]
			c.Group = r.Summary.Group(c.Model, c.Target)
		}
		slices.SortStableFunc(r.Comparisons, func(a, b eval.Comparison) int { return r.compareUnits(a.Model, a.Target, b.Model, b.Target) })
	}
	if raw, ok, err := optional(dir, experiment.SummaryFile); err != nil {
		return nil, err
	} else if ok {
		r.SummaryMarkdown = string(raw)
	}
	if raw, ok, err := optional(dir, experiment.VersionsFile); err != nil {
		return nil, err
	} else if ok {
		r.Versions = string(raw)
	}
	if raw, ok, err := optional(dir, experiment.LearningFile); err != nil {
		return nil, err
	} else if ok {
		if r.Curves, err = parseCurves(raw, filepath.Join(dir, experiment.LearningFile)); err != nil {
			return nil, err
		}
	}
	if raw, ok, err := optional(dir, experiment.PermutationFile); err != nil {
		return nil, err
	} else if ok {
		if r.Nulls, r.ClassNulls, err = eval.ReadNullCSV(bytes.NewReader(raw), filepath.Join(dir, experiment.PermutationFile)); err != nil {
			return nil, err
		}
	}
	if err := r.readClassPredictions(); err != nil {
		return nil, err
	}
	if r.Importance, err = readImportance(filepath.Join(dir, experiment.UnitsDir)); err != nil {
		return nil, err
	}
	if r.Networks, err = readFilters(filepath.Join(dir, experiment.ModelsDir)); err != nil {
		return nil, err
	}
	if err := r.readRegions(); err != nil {
		return nil, err
	}
	r.sortParts()
	return r, nil
}

// sortParts puts the per-model parts read from the run's files in report
// order (see modelRank), keeping repeats and folds in order within a
// model, so that every figure, table and importance.csv list models alike.
func (r *Run) sortParts() {
	slices.SortStableFunc(r.Nulls, func(a, b eval.NullDistribution) int {
		return r.compareUnits(a.Model, a.Target, b.Model, b.Target)
	})
	slices.SortStableFunc(r.ClassNulls, func(a, b eval.ClassNullDistribution) int {
		return cmp.Or(r.compareUnits(a.Model, "", b.Model, ""), cmp.Compare(r.labelRank(a.Label), r.labelRank(b.Label)), cmp.Compare(a.Label, b.Label))
	})
	slices.SortStableFunc(r.Importance, func(a, b UnitImportance) int { return r.compareUnits(a.Model, "", b.Model, "") })
	slices.SortStableFunc(r.Networks, func(a, b SavedFilters) int { return r.compareUnits(a.Model, "", b.Model, "") })
}

// optional reads dir/name, reporting ok = false when it does not exist.
func optional(dir, name string) ([]byte, bool, error) {
	raw, err := os.ReadFile(filepath.Join(dir, name))
	if errors.Is(err, fs.ErrNotExist) {
		return nil, false, nil
	}
	return raw, err == nil, err
}

// P returns the number of regions of the run, 0 when unknown.
func (r *Run) P() int {
	if r.Cohort != nil && r.Cohort.Regions > 0 {
		return r.Cohort.Regions
	}
	for _, u := range r.Importance {
		if len(u.Maps) > 0 {
			return int(math.Round(math.Sqrt(float64(len(u.Maps[0])))))
		}
		if len(u.LabelMaps) > 0 {
			p, _ := u.LabelMaps[0].Map.Dims()
			return p
		}
	}
	return 0
}

// readRegions fills Regions from regions.txt, else a saved network's
// fitted.json, else the default labels.
func (r *Run) readRegions() error {
	p := r.P()
	raw, ok, err := optional(r.Dir, experiment.RegionsFile)
	if err != nil {
		return err
	}
	if ok {
		labels := strings.Split(strings.TrimRight(string(raw), "\n"), "\n")
		if p > 0 && len(labels) != p {
			return fmt.Errorf("%s: %d labels, but the run has %d regions", filepath.Join(r.Dir, experiment.RegionsFile), len(labels), p)
		}
		r.Regions = labels
		return nil
	}
	for _, n := range r.Networks {
		if len(n.Regions) == p && p > 0 {
			r.Regions = n.Regions
			return nil
		}
	}
	if p > 0 {
		r.Regions = data.DefaultRegions(p)
	}
	return nil
}

// WriteRegions writes the cohort's region labels as regions.txt into dir
// (a run's work folder), so that a report rebuilt later labels its maps.
func WriteRegions(dir string, labels []string) error {
	return atomicfile.WriteFile(filepath.Join(dir, experiment.RegionsFile), []byte(strings.Join(labels, "\n")+"\n"))
}

// csvTable reads a CSV file with a header and checks its columns.
type csvTable struct {
	name   string
	header map[string]int
	rows   [][]string
}

func readCSV(raw []byte, name string, want ...string) (*csvTable, error) {
	cr := csv.NewReader(bytes.NewReader(raw))
	header, err := cr.Read()
	if err == io.EOF {
		return nil, &data.FileError{Path: name, Line: 1, Err: fmt.Errorf("empty file, want a header line with %s", strings.Join(want, ","))}
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	t := &csvTable{name: name, header: make(map[string]int)}
	for i, h := range header {
		t.header[h] = i
	}
	for _, w := range want {
		if _, ok := t.header[w]; !ok {
			return nil, &data.FileError{Path: name, Line: 1, Err: fmt.Errorf("no column %q (found %s)", w, strings.Join(header, ","))}
		}
	}
	if t.rows, err = cr.ReadAll(); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return t, nil
}

// cellError describes a bad cell: the file, 1-based line and column.
func (t *csvTable) cellError(row int, col, want string) error {
	return &data.FileError{Path: t.name, Line: row + 2, Column: t.header[col] + 1, ColumnName: col,
		Err: fmt.Errorf("want %s, found %q", want, t.rows[row][t.header[col]])}
}

func (t *csvTable) str(row int, col string) string { return t.rows[row][t.header[col]] }

// number reads a repeat or fold number, from 1 in files, and returns it
// from 0 as skein holds it in memory.
func (t *csvTable) number(row int, col string) (int, error) {
	v, err := strconv.Atoi(t.str(row, col))
	if err != nil || v < 1 {
		return 0, t.cellError(row, col, "a whole number ≥ 1")
	}
	return v - 1, nil
}

func (t *csvTable) int(row int, col string) (int, error) {
	v, err := strconv.Atoi(t.str(row, col))
	if err != nil || v < 0 {
		return 0, t.cellError(row, col, "a whole number ≥ 0")
	}
	return v, nil
}

// float parses a number; empty (when allowed) and "NaN" give NaN.
func (t *csvTable) float(row int, col string, emptyOK bool) (float64, error) {
	s := t.str(row, col)
	if s == "" && emptyOK {
		return math.NaN(), nil
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return 0, t.cellError(row, col, "a number")
	}
	return v, nil
}

func parseCurves(raw []byte, name string) ([]CurvePoint, error) {
	t, err := readCSV(raw, name, "model", "repeat", "fold", "epoch", "train_loss", "valid_loss", "best")
	if err != nil {
		return nil, err
	}
	out := make([]CurvePoint, len(t.rows))
	for i := range t.rows {
		c := CurvePoint{Model: t.str(i, "model")}
		if c.Repeat, err = t.number(i, "repeat"); err == nil {
			if c.Fold, err = t.number(i, "fold"); err == nil {
				if c.Epoch, err = t.int(i, "epoch"); err == nil {
					if c.TrainLoss, err = t.float(i, "train_loss", false); err == nil {
						c.ValidLoss, err = t.float(i, "valid_loss", true)
					}
				}
			}
		}
		if _, ok := t.header["member"]; ok && err == nil {
			c.Member, err = t.int(i, "member")
		}
		if err != nil {
			return nil, err
		}
		switch t.str(i, "best") {
		case "1":
			c.Best = true
		case "0":
		default:
			return nil, t.cellError(i, "best", "0 or 1")
		}
		out[i] = c
	}
	return out, nil
}

// readImportance reads the importance maps of every unit checkpoint under
// dir, sorted by model, repeat and fold.
func readImportance(dir string) ([]UnitImportance, error) {
	files, err := filepath.Glob(filepath.Join(dir, "*", "*.json"))
	if err != nil {
		return nil, err
	}
	var out []UnitImportance
	for _, path := range files {
		u, err := train.ReadCheckpoint(path)
		if err != nil {
			return nil, err
		}
		if len(u.Importance) == 0 && len(u.LabelImportance) == 0 {
			continue
		}
		for k, m := range u.Importance {
			p := int(math.Round(math.Sqrt(float64(len(m)))))
			if p*p != len(m) || p == 0 || len(m) != len(u.Importance[0]) {
				return nil, fmt.Errorf("%s: importance map %d has %d values, want p × p like the first", path, k+1, len(m))
			}
		}
		out = append(out, UnitImportance{Model: u.Model, Repeat: u.Repeat, Fold: u.Fold, Maps: u.Importance, LabelMaps: u.LabelImportance})
	}
	sort.Slice(out, func(a, b int) bool {
		return unitLess(out[a].Model, out[a].Repeat, out[a].Fold, out[b].Model, out[b].Repeat, out[b].Fold)
	})
	return out, nil
}

// unitLess orders units by model name, then repeat, then fold.
func unitLess(modelA string, repeatA, foldA int, modelB string, repeatB, foldB int) bool {
	if modelA != modelB {
		return modelA < modelB
	}
	if repeatA != repeatB {
		return repeatA < repeatB
	}
	return foldA < foldB
}
