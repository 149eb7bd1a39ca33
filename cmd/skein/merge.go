package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/train"
)

func cmdMerge(ctx context.Context, cio commandIO, args []string) error {
	flags := flag.NewFlagSet("merge", flag.ContinueOnError)
	flags.SetOutput(cio.stderr)
	force := flags.Bool("force", false, "replace an existing run folder DIR")
	flags.Usage = func() {
		fmt.Fprintln(cio.stderr, "usage: skein merge DIR [--force]")
		fmt.Fprintln(cio.stderr, "Combines the finished units of the plan in DIR.partial (skein plan) into the run folder DIR.")
		flags.PrintDefaults()
	}
	positional, err := positionalArgs(flags, args, 1, "the run folder of one plan")
	if err != nil {
		return err
	}
	out, err := filepath.Abs(positional[0])
	if err != nil {
		return err
	}
	rec, err := readPlan(out)
	if err != nil {
		return err
	}
	// The experiment is the one planned: its resolved copy, whose relative
	// paths start where the original file was.
	resolvedPath := filepath.Join(out+".partial", resolvedFile)
	raw, err := os.ReadFile(resolvedPath)
	if err != nil {
		return err
	}
	exp, err := experiment.ParseExperiment(raw)
	if err != nil {
		return fmt.Errorf("%s: %w", resolvedPath, err)
	}
	exp.Dir = rec.ExperimentDir
	b, err := openBatchExperiment(rec.Experiment, exp)
	if err != nil {
		return err
	}
	rd, err := experiment.OpenRunDir(out, rec.Replace || *force, true)
	if err != nil {
		return badInput(err)
	}
	if err := b.checkPlanned(rd, rec); err != nil {
		return err
	}
	units, err := experiment.BatchUnits(b.runner, b.exp.Permutation, rec.Block)
	if err != nil {
		return err
	}

	r := b.runner
	r.Checkpoints = rd.Checkpoints()
	r.FromCheckpoints = true
	res, runErr := r.Run(ctx)
	var missingModels *train.MissingUnitsError
	if runErr != nil && !errors.As(runErr, &missingModels) {
		return runErr
	}
	var missing []experiment.BatchUnit
	var nullRows []eval.NullScores
	for _, u := range units {
		switch u.Kind {
		case experiment.BatchModel:
			if missingModels != nil && slices.Contains(missingModels.Units, u.Select) {
				missing = append(missing, u)
			}
		case experiment.BatchPermutations:
			path := rd.WorkPath(nullFile(u))
			raw, err := os.ReadFile(path)
			if errors.Is(err, fs.ErrNotExist) {
				missing = append(missing, u)
				continue
			}
			if err != nil {
				return err
			}
			rows, err := eval.ReadNullScores(bytes.NewReader(raw), path)
			if err != nil {
				return fmt.Errorf("%w (delete the file and rerun unit %d)", err, u.Index)
			}
			nullRows = append(nullRows, rows...)
		}
	}
	if len(missing) > 0 {
		return reportMissing(cio, rd, rec, units, missing)
	}

	if exp.Output.Refit {
		fmt.Fprintln(cio.stderr, "skein merge: refitting on all participants")
		r.Models = rd.ModelsDir()
		if err := r.Refit(ctx); err != nil {
			return err
		}
	}
	report, err := experiment.EvaluateWithNulls(ctx, b.exp, r, res, rec.Bins, func(observed *eval.Summary) ([]eval.NullDistribution, error) {
		return eval.AssembleNulls(observed, nullRows, exp.Permutation.Count)
	})
	if err != nil {
		return err
	}
	if err := report.Write(rd); err != nil {
		return err
	}
	if err := writeSweep(rd, b.exp, b.variants, res); err != nil {
		return err
	}
	if err := rd.WriteFile(versionsFile, []byte(versions(exp))); err != nil {
		return err
	}
	if err := rd.WriteFile(logFile, mergedLog(rd, len(units))); err != nil {
		return err
	}
	if err := buildReport(rd.Partial, r.Cohort.Regions); err != nil {
		fmt.Fprintf(cio.stderr, "skein merge: the figures and report failed (%v); the results are kept: rerun \"skein report %s\"\n", err, rd.Final)
	}
	if err := rd.Commit(); err != nil {
		return err
	}
	var summary bytes.Buffer
	if err := report.WriteMarkdown(&summary); err != nil {
		return err
	}
	cio.stdout.Write(summary.Bytes())
	fmt.Fprintf(cio.stdout, "\nMerged %d units; results in %s\n", len(units), rd.Final)
	return nil
}

// reportMissing lists the units that have not finished, with the error of
// those that failed, and the commands that run just those again.
func reportMissing(cio commandIO, rd *experiment.RunDir, rec *planRecord, units, missing []experiment.BatchUnit) error {
	fmt.Fprintf(cio.stderr, "skein merge: %d of %d units have not finished:\n", len(missing), len(units))
	indices := make([]string, len(missing))
	for i, u := range missing {
		indices[i] = strconv.Itoa(u.Index)
		state := "not run yet, still running, or stopped before the end"
		if msg, err := os.ReadFile(rd.WorkPath(failedFile(u.Index))); err == nil {
			state = "failed: " + strings.TrimSpace(string(msg))
		}
		fmt.Fprintf(cio.stderr, "  unit %d, %s: %s\n", u.Index, describeUnit(u), state)
	}
	list := arrayRanges(missing)
	fmt.Fprintf(cio.stderr, "Resubmit just these:  sbatch --array=%s %s\n", list, shellQuote(rd.WorkPath(jobFile)))
	fmt.Fprintf(cio.stderr, "or run them here:     for k in %s; do skein run %s --out %s --unit $k; done\n",
		strings.Join(indices, " "), shellQuote(rec.Experiment), shellQuote(rd.Final))
	fmt.Fprintf(cio.stderr, "then merge again. Finished units are kept in %s.\n", rd.Partial)
	return fmt.Errorf("%d units missing (%s); nothing merged", len(missing), list)
}

// mergedLog is run.log of a merged run: the log of an earlier run in the
// work folder, if any, each unit's log in unit order, and the merge.
func mergedLog(rd *experiment.RunDir, units int) []byte {
	var buf bytes.Buffer
	if old, err := os.ReadFile(rd.WorkPath(logFile)); err == nil {
		buf.Write(old)
	}
	for k := range units {
		if raw, err := os.ReadFile(rd.WorkPath(unitLog(k))); err == nil {
			buf.Write(raw)
		}
	}
	line, _ := json.Marshal(map[string]any{"time": time.Now().Format(time.RFC3339Nano), "level": "INFO", "msg": "units merged", "units": units, "out": rd.Final})
	buf.Write(append(line, '\n'))
	return buf.Bytes()
}

// arrayRanges writes the indices of units as sbatch --array wants them,
// runs of consecutive indices as ranges: 1-4,7,9-10.
func arrayRanges(units []experiment.BatchUnit) string {
	var parts []string
	for i := 0; i < len(units); {
		j := i
		for j+1 < len(units) && units[j+1].Index == units[j].Index+1 {
			j++
		}
		if j == i {
			parts = append(parts, strconv.Itoa(units[i].Index))
		} else {
			parts = append(parts, strconv.Itoa(units[i].Index)+"-"+strconv.Itoa(units[j].Index))
		}
		i = j + 1
	}
	return strings.Join(parts, ",")
}
