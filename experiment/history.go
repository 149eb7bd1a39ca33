package experiment

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/internal/atomicfile"
)

// HistoryFile is the name of a history file given by hand in the
// examples; a run's default is DefaultHistory.
const HistoryFile = "history.csv"

// DefaultHistory returns the history file of the experiment file at
// path: NAME.history.csv beside it, NAME the file's name without its
// extension (experiment.toml has experiment.history.csv). Each experiment
// file thus keeps its own history, wherever its runs go.
func DefaultHistory(path string) string {
	stem := strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
	return filepath.Join(filepath.Dir(path), stem+".history.csv")
}

// historyColumns is the header of the history file; legacyColumns that of
// a history written before the experiment was recorded, whose rows are
// read with an empty experiment.
var (
	historyColumns = []string{"date", "experiment", "run", "model", "target", "r_within_folds", "mae", "permutation_p", "n"}
	legacyColumns  = []string{"date", "run", "model", "target", "r_within_folds", "mae", "permutation_p", "n"}
)

// A HistoryRow is the headline of one model on one target in one run: a
// line of the history file
// date,experiment,run,model,target,r_within_folds,mae,permutation_p,n
// where date is the time the run finished (RFC 3339, UTC), experiment the
// absolute path of the experiment file, run the run folder's name,
// r_within_folds (the headline r, eval.PearsonWithinFolds) and mae the
// pooled figures, permutation_p the permutation p-value of r within folds
// (empty without a permutation test) and n the participants with a
// prediction. An undefined value is empty.
type HistoryRow struct {
	Date              time.Time
	Experiment        string
	Run               string
	Model, Target     string
	RWithinFolds, MAE float64
	PermutationP      float64 // NaN without a permutation test
	N                 int
}

// HistoryRows returns the headline rows of run of the experiment file
// experiment (an absolute path), dated date, in the order of its summary.
func HistoryRows(experiment string, run *Folder, date time.Time) []HistoryRow {
	rows := make([]HistoryRow, 0, len(run.Summary.Groups))
	for _, g := range run.Summary.Groups {
		k := [2]string{g.Model, g.Target}
		p := math.NaN()
		if v, ok := run.P[k]; ok {
			p = v.PearsonWithin
		}
		rows = append(rows, HistoryRow{Date: date.UTC(), Experiment: experiment, Run: filepath.Base(run.Dir), Model: g.Model, Target: g.Target,
			RWithinFolds: g.Pooled.PearsonWithin, MAE: g.Pooled.MAE, PermutationP: p, N: run.Scored[k]})
	}
	return rows
}

// AppendHistory appends rows to the history file at path, creating it
// with its header when it does not exist. The file is replaced whole: read,
// appended to, written to a temporary file beside it and renamed over it,
// so a reader never sees half a line; a history without the experiment
// column is rewritten with it (empty in its old rows). An existing file
// whose header is not a history header is an error and is left alone. Two
// processes appending at the same moment may lose one's rows: run one
// nightly job per history file.
func AppendHistory(path string, rows []HistoryRow) error {
	var all []HistoryRow
	old, err := os.ReadFile(path)
	switch {
	case errors.Is(err, fs.ErrNotExist):
	case err != nil:
		return err
	default:
		if all, err = ReadHistory(bytes.NewReader(old), path); err != nil {
			return fmt.Errorf("not appending to the history: %w", err)
		}
	}
	all = append(all, rows...)
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write(historyColumns)
	for _, r := range all {
		w.Write([]string{r.Date.UTC().Format(time.RFC3339), r.Experiment, r.Run, r.Model, r.Target,
			cell(r.RWithinFolds), cell(r.MAE), cell(r.PermutationP), strconv.Itoa(r.N)})
	}
	w.Flush()
	if err := w.Error(); err != nil {
		return err
	}
	return atomicfile.WriteFile(path, buf.Bytes())
}

func cell(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// ReadHistory reads a history file; name is used in errors, which name the
// line and column.
func ReadHistory(r io.Reader, name string) ([]HistoryRow, error) {
	cr := csv.NewReader(r)
	header, err := cr.Read()
	if err == io.EOF {
		return nil, &data.FileError{Path: name, Line: 1, Err: fmt.Errorf("empty file, want the header %s", strings.Join(historyColumns, ","))}
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	columns := historyColumns
	switch {
	case slices.Equal(header, historyColumns):
	case slices.Equal(header, legacyColumns):
		columns = legacyColumns
	case slices.Contains(header, "pearson_r"):
		return nil, &data.FileError{Path: name, Line: 1, Err: errors.New("a history of an older skein, which recorded pooled " +
			"Pearson r (biased in cross-validation) where it now records r within folds: move it aside to start a new history")}
	default:
		return nil, &data.FileError{Path: name, Line: 1, Err: fmt.Errorf("want the header %s, found %s", strings.Join(historyColumns, ","), strings.Join(header, ","))}
	}
	at := func(col string) int { return slices.Index(columns, col) }
	var rows []HistoryRow
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			return rows, nil
		}
		if err != nil {
			return nil, fmt.Errorf("%s: %w", name, err)
		}
		line, _ := cr.FieldPos(0)
		bad := func(c int, want string) error {
			return &data.FileError{Path: name, Line: line, Column: c + 1, ColumnName: columns[c], Err: fmt.Errorf("want %s, found %q", want, rec[c])}
		}
		row := HistoryRow{Run: rec[at("run")], Model: rec[at("model")], Target: rec[at("target")]}
		if c := at("experiment"); c >= 0 {
			row.Experiment = rec[c]
		}
		if row.Date, err = time.Parse(time.RFC3339, rec[0]); err != nil {
			return nil, bad(0, "an RFC 3339 time such as 2026-03-01T02:00:00Z")
		}
		for col, dst := range map[string]*float64{"r_within_folds": &row.RWithinFolds, "mae": &row.MAE, "permutation_p": &row.PermutationP} {
			c := at(col)
			if rec[c] == "" {
				*dst = math.NaN()
			} else if *dst, err = strconv.ParseFloat(rec[c], 64); err != nil {
				return nil, bad(c, "a number or an empty cell")
			}
		}
		c := at("n")
		if row.N, err = strconv.Atoi(rec[c]); err != nil || row.N < 0 {
			return nil, bad(c, "a whole number ≥ 0")
		}
		rows = append(rows, row)
	}
}

// ReadHistoryFile reads the history file at path.
func ReadHistoryFile(path string) ([]HistoryRow, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadHistory(f, path)
}

// UpdateHistory appends the headline rows of run of the experiment file
// experiment (an absolute path), dated date, to the history file at path
// (AppendHistory) and redraws the plot of the whole history (PlotHistory)
// beside it: path with the extensions .png and .svg, replaced atomically
// too.
func UpdateHistory(path, experiment string, run *Folder, date time.Time) error {
	if err := AppendHistory(path, HistoryRows(experiment, run, date)); err != nil {
		return err
	}
	rows, err := ReadHistoryFile(path)
	if err != nil {
		return err
	}
	var png, svg bytes.Buffer
	if err := PlotHistory(&png, &svg, rows); err != nil {
		return err
	}
	plotPath := HistoryPlotPath(path)
	if err := atomicfile.WriteFile(plotPath, png.Bytes()); err != nil {
		return err
	}
	return atomicfile.WriteFile(strings.TrimSuffix(plotPath, ".png")+".svg", svg.Bytes())
}

// HistoryPlotPath returns where UpdateHistory draws the plot of the history
// file at path.
func HistoryPlotPath(path string) string {
	return strings.TrimSuffix(path, filepath.Ext(path)) + ".png"
}
