package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"log/slog"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"strings"
	"time"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/train"
)

// Files of a run folder written here; the results are eval.WriteRun's.
const (
	resolvedFile = "experiment.toml"
	logFile      = "run.log"
	versionsFile = "versions.txt"
	cohortFile   = "cohort.json" // the cohort report of skein check --json
)

func cmdRun(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	out := fs.String("out", "", "run folder to create (default runs/NAME-YYYYMMDD-HHMMSS)")
	jobs := fs.Int("jobs", 0, "units trained at once (default: from the number of units and cores, train.ChooseParallelism); results do not depend on it")
	force := fs.Bool("force", false, "replace an existing run folder once the new run has finished")
	resume := fs.Bool("resume", false, "finish an interrupted run in the same folder")
	bins := fs.Int("bins", eval.DefaultBins, "equal-frequency bins for NMI")
	unit := fs.Int("unit", 0, "run only unit `K` of the plan in --out (skein plan); default $SLURM_ARRAY_TASK_ID when --out holds a plan")
	against := fs.String("against", "", "compare with the earlier run folder `DIR` and apply the experiment's [drift] rule (exit 4 when broken)")
	history := fs.String("history", "", "history `FILE` the run's headline figures are appended to (default history.csv beside the run folder)")
	noHistory := fs.Bool("no-history", false, "do not append to the history file")
	fs.Usage = func() {
		fmt.Fprintln(cio.stderr, "usage: skein run EXPERIMENT.toml [--out DIR] [--jobs N] [--force] [--resume] [--unit K] [--against DIR]")
		fs.PrintDefaults()
	}
	positional, err := positionalArgs(fs, args, 1, "one experiment file")
	if err != nil {
		return err
	}
	expPath := positional[0]
	if k, ok, err := unitIndex(fs, *unit, *out); err != nil {
		return err
	} else if ok {
		return runUnit(ctx, cio, expPath, *out, k, *jobs)
	}
	exp, err := experiment.ReadExperiment(expPath)
	if err != nil {
		return badInput(err)
	}
	if len(exp.Models) == 0 {
		return badInput(fmt.Errorf("%s: no [[model]] to run", expPath))
	}
	// One kind of parallelism at a time: units at once, single-threaded
	// BLAS (results do not depend on it; see train.ChooseParallelism).
	par := train.ChooseParallelism(runtime.NumCPU(), len(exp.Models)*(*exp.CV.Folds)*(*exp.CV.Repeats))
	if *jobs > 0 {
		par = train.Parallelism{Jobs: *jobs, BLASThreads: 1}
	}
	*jobs = par.Jobs
	blasThreads := train.ApplyBLASThreads(par.BLASThreads)
	prev, err := readAgainst(cio, *against, exp)
	if err != nil {
		return err
	}
	cohort, cohortReport, err := data.Check(exp.Cohort, exp.Preprocess, exp.Dir)
	if err != nil {
		return badInput(err)
	}
	if *out == "" {
		if *resume {
			return badInput(errors.New("--resume needs the --out folder of the interrupted run"))
		}
		stem := strings.TrimSuffix(filepath.Base(expPath), filepath.Ext(expPath))
		if stem == "experiment" {
			stem = filepath.Base(exp.Dir)
		}
		*out = filepath.Join("runs", stem+"-"+time.Now().Format("20060102-150405"))
	}
	exp, variants, err := exp.Expand() // [[sweep]] points become models
	if err != nil {
		return badInput(fmt.Errorf("%s: %w", expPath, err))
	}
	resolved, err := toml.Marshal(exp)
	if err != nil {
		return err
	}
	rd, err := experiment.OpenRunDir(*out, *force, *resume)
	if err != nil {
		return badInput(err)
	}
	if err := rd.CheckResume(resolvedFile, resolved); err != nil {
		return badInput(err)
	}
	if err := rd.WriteFile(resolvedFile, resolved); err != nil {
		return err
	}
	cohortJSON, err := json.MarshalIndent(cohortReport, "", "  ")
	if err != nil {
		return err
	}
	if err := rd.WriteFile(cohortFile, cohortJSON); err != nil {
		return err
	}
	logOut, err := os.OpenFile(rd.WorkPath(logFile), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		return err
	}
	defer logOut.Close()
	fileLog := slog.New(slog.NewJSONHandler(logOut, nil))
	fileLog.Info("run started", "experiment", expPath, "out", rd.Final, "seed", exp.Seed,
		"participants", len(cohort.Participants), "excluded", len(cohort.Excluded), "jobs", *jobs, "blas_threads", blasThreads, "resume", *resume)
	show := newProgress(cio.stderr, slog.New(slog.NewTextHandler(cio.stderr, nil)), len(exp.Models)*(*exp.CV.Folds)*(*exp.CV.Repeats))
	fmt.Fprintf(cio.stderr, "skein run: %d participants (%d excluded), %d regions, %d models, %d-fold × %d\n",
		len(cohort.Participants), len(cohort.Excluded), cohort.P(), len(exp.Models), *exp.CV.Folds, *exp.CV.Repeats)

	runner := &train.Runner{
		Design:      exp.Design(),
		Cohort:      cohort,
		Jobs:        *jobs,
		Logger:      fileLog,
		OnEvent:     show.event,
		Checkpoints: rd.Checkpoints(),
		Models:      rd.ModelsDir(),
	}
	res, err := runner.Run(ctx)
	show.finish()
	if err != nil {
		fileLog.Error("run failed", "error", err.Error())
		switch {
		case errors.Is(err, context.Canceled):
			return fmt.Errorf("%w; finished units are kept in %s: rerun with --resume --out %s", err, rd.Partial, rd.Final)
		case errors.Is(err, model.ErrDiverged):
			return &exitError{exitTraining, fmt.Errorf("%w (nothing written to %s; the work folder %s keeps finished units)", err, rd.Final, rd.Partial)}
		}
		return err
	}
	if exp.Output.Refit {
		fmt.Fprintln(cio.stderr, "skein run: refitting on all participants")
		if err := runner.Refit(ctx); err != nil {
			fileLog.Error("refit failed", "error", err.Error())
			return err
		}
	}
	if exp.Permutation.Count > 0 {
		fmt.Fprintf(cio.stderr, "skein run: permutation test, %d permutations\n", exp.Permutation.Count)
	}
	report, err := experiment.Evaluate(ctx, exp, runner, res, *bins)
	if err != nil {
		fileLog.Error("evaluation failed", "error", err.Error())
		return err
	}
	if err := report.Write(rd); err != nil {
		return err
	}
	if err := writeSweep(rd, exp, variants, res); err != nil {
		return err
	}
	if err := rd.WriteFile(versionsFile, []byte(versions(exp))); err != nil {
		return err
	}
	verdict, err := writeNightly(rd, report, prev, exp.Drift)
	if err != nil {
		return err
	}
	// Figures and report.html are a view of the files above: failing to
	// draw them must not lose the run ("skein report" can draw them again).
	if err := buildReport(rd.Partial, cohort.Regions); err != nil {
		fileLog.Error("report failed", "error", err.Error())
		fmt.Fprintf(cio.stderr, "skein run: the figures and report failed (%v); the results are kept: rerun \"skein report %s\"\n", err, rd.Final)
	}
	fileLog.Info("run finished")
	if err := rd.Commit(); err != nil {
		return err
	}
	var summary bytes.Buffer
	if err := report.WriteMarkdown(&summary); err != nil {
		return err
	}
	cio.stdout.Write(summary.Bytes())
	fmt.Fprintf(cio.stdout, "\nResults in %s\n", rd.Final)
	if !*noHistory {
		if err := recordHistory(cio, rd.Final, *history); err != nil {
			return err
		}
	}
	return driftError(cio, verdict, prev, rd.Final)
}

// versions records what made a run: skein's and its modules' versions, Go,
// the machine and the seed.
func versions(exp *experiment.Experiment) string {
	var b strings.Builder
	fmt.Fprintf(&b, "go %s %s/%s, %d CPUs\nseed %d\n", runtime.Version(), runtime.GOOS, runtime.GOARCH, runtime.NumCPU(), exp.Seed)
	if info, ok := debug.ReadBuildInfo(); ok {
		fmt.Fprintf(&b, "%s %s\n", info.Main.Path, info.Main.Version)
		for _, s := range info.Settings {
			if s.Key == "vcs.revision" || s.Key == "vcs.modified" || s.Key == "-tags" {
				fmt.Fprintf(&b, "%s %s\n", s.Key, s.Value)
			}
		}
		for _, dep := range info.Deps {
			fmt.Fprintf(&b, "%s %s\n", dep.Path, dep.Version)
		}
	}
	return b.String()
}
