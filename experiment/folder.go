package experiment

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
)

// A Folder is what ReadFolder found in a finished run folder.
type Folder struct {
	Dir string
	// Settings is the resolved experiment file decoded into tables: maps
	// for tables, []any for arrays, and TOML's scalar types.
	Settings map[string]any
	// Cohort is the cohort report; nil when the folder has no cohort.json.
	Cohort *data.Report
	// Participants lists, sorted, every participant with a prediction.
	Participants []string
	// Scored counts, per model and target, the participants with a
	// prediction.
	Scored map[[2]string]int
	// Summary holds the metrics (metrics.json).
	Summary *eval.Summary
	// P holds, per model and target, the permutation p-value of every
	// metric; nil when the run had no permutation test.
	P map[[2]string]eval.Values
	// Versions lists versions.txt as name and version pairs, in file
	// order; nil when the folder has none.
	Versions [][2]string
}

// Read reads the run folder dir. experiment.toml, predictions.csv and
// metrics.json are required; cohort.json, versions.txt and
// permutations.csv are read when present. Errors name the file and, for
// bad content, the line.
func ReadFolder(dir string) (*Folder, error) {
	if fi, err := os.Stat(dir); err != nil {
		return nil, err
	} else if !fi.IsDir() {
		return nil, fmt.Errorf("%s: not a run folder (a file, not a folder)", dir)
	}
	run := &Folder{Dir: dir, Scored: make(map[[2]string]int)}
	path := func(name string) string { return filepath.Join(dir, name) }
	raw, err := readRequired(path(ExperimentFile))
	if err != nil {
		return nil, err
	}
	if err := toml.Unmarshal(raw, &run.Settings); err != nil {
		var de *toml.DecodeError
		if errors.As(err, &de) {
			row, col := de.Position()
			return nil, fmt.Errorf("%s:%d: column %d: %v", path(ExperimentFile), row, col, de)
		}
		return nil, fmt.Errorf("%s: %w", path(ExperimentFile), err)
	}

	raw, err = readRequired(path(PredictionsFile))
	if err != nil {
		return nil, err
	}
	rows, _, err := eval.ReadPredictions(bytes.NewReader(raw), path(PredictionsFile))
	if err != nil {
		return nil, err
	}
	ids := make(map[string]bool)
	seen := make(map[[3]string]bool)
	for _, r := range rows {
		ids[r.ParticipantID] = true
		if k := [3]string{r.Model, r.Target, r.ParticipantID}; !seen[k] {
			seen[k] = true
			run.Scored[[2]string{r.Model, r.Target}]++
		}
	}
	for id := range ids {
		run.Participants = append(run.Participants, id)
	}
	slices.Sort(run.Participants)

	raw, err = readRequired(path(MetricsFile))
	if err != nil {
		return nil, err
	}
	run.Summary = new(eval.Summary)
	if err := json.Unmarshal(raw, run.Summary); err != nil {
		return nil, fmt.Errorf("%s: %w", path(MetricsFile), err)
	}

	if raw, err = readOptional(path(CohortFile)); err != nil {
		return nil, err
	} else if raw != nil {
		run.Cohort = new(data.Report)
		if err := json.Unmarshal(raw, run.Cohort); err != nil {
			return nil, fmt.Errorf("%s: %w", path(CohortFile), err)
		}
	}
	if raw, err = readOptional(path(VersionsFile)); err != nil {
		return nil, err
	} else if raw != nil {
		run.Versions = parseVersions(raw)
	}
	if raw, err = readOptional(path(PermutationFile)); err != nil {
		return nil, err
	} else if raw != nil {
		if run.P, err = readPValues(bytes.NewReader(raw), path(PermutationFile)); err != nil {
			return nil, err
		}
	}
	return run, nil
}

func readRequired(path string) ([]byte, error) {
	raw, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("%s is missing: is %s a finished skein run folder?", filepath.Base(path), filepath.Dir(path))
	}
	return raw, err
}

func readOptional(path string) ([]byte, error) {
	raw, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	return raw, err
}

// parseVersions splits each non-empty line into its first word and the
// rest.
func parseVersions(raw []byte) [][2]string {
	var out [][2]string
	sc := bufio.NewScanner(bytes.NewReader(raw))
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" {
			continue
		}
		name, version, _ := strings.Cut(line, " ")
		out = append(out, [2]string{name, strings.TrimSpace(version)})
	}
	return out
}

// readPValues reads the permutation p-values of PermutationFile, per model
// and target (eval.ReadNullCSV).
func readPValues(r io.Reader, name string) (map[[2]string]eval.Values, error) {
	nulls, _, err := eval.ReadNullCSV(r, name)
	if err != nil {
		return nil, err
	}
	out := make(map[[2]string]eval.Values, len(nulls))
	for _, nd := range nulls {
		out[[2]string{nd.Model, nd.Target}] = nd.P
	}
	return out, nil
}
