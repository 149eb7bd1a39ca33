package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"log/slog"
	"runtime"
	"strings"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/train"
)

func cmdRun(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	out := fs.String("out", "", "run folder to create (default runs/NAME-YYYYMMDD-HHMMSS)")
	jobs := fs.Int("jobs", 0, "units trained at once (default: from the number of units and cores); results do not depend on it")
	force := fs.Bool("force", false, "replace an existing run folder once the new run has finished")
	resume := fs.Bool("resume", false, "finish an interrupted run in the same folder (refused when the experiment or a cohort file changed since)")
	bins := fs.Int("bins", eval.DefaultBins, "equal-frequency bins for NMI and AMI")
	unit := fs.Int("unit", 0, "run only unit `K` of the plan in --out (skein plan); default $SLURM_ARRAY_TASK_ID when --out holds a plan")
	against := fs.String("against", "", "compare with the earlier run folder `DIR` and apply the experiment's [drift] rule (exit 4 when broken)")
	history := fs.String("history", "", "history `FILE` the run's headline figures are appended to, its plot beside it as .png (default NAME.history.csv beside the experiment file NAME.toml)")
	noHistory := fs.Bool("no-history", false, "do not append to the history file")
	fs.Usage = func() {
		describe(cio.stderr, "run")
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
		u, resumed, err := experiment.RunUnit(ctx, expPath, *out, k, *jobs)
		if err != nil {
			return err
		}
		state := "finished"
		if resumed {
			state = "had finished already"
		}
		fmt.Fprintf(cio.stderr, "skein run: unit %d (%s) %s\n", k, u, state)
		return nil
	}
	exp, err := experiment.ReadExperiment(expPath)
	if err != nil {
		return badInput(err)
	}
	// One kind of parallelism at a time: units at once, single-threaded
	// BLAS (results do not depend on it; see train.ChooseParallelism).
	par := train.ChooseParallelism(runtime.NumCPU(), len(exp.Models)*(*exp.CV.Folds)*(*exp.CV.Repeats))
	if *jobs > 0 {
		par = train.Parallelism{Jobs: *jobs, BLASThreads: 1}
	}
	opt := experiment.RunOptions{Out: *out, Force: *force, Resume: *resume, Jobs: par.Jobs, Bins: *bins,
		BLASThreads: train.ApplyBLASThreads(par.BLASThreads), Messages: cio.stderr, Views: buildReport}
	if *against != "" {
		if opt.Against, err = experiment.ReadAgainst(*against); err != nil {
			return err
		}
		if !exp.Drift.Enabled() {
			fmt.Fprintln(cio.stderr, "skein run: the experiment has no [drift] rule: --against only writes the comparison ("+experiment.DriftFile+")")
		}
	}
	var names []string
	if expanded, _, err := exp.Expand(); err == nil { // an error is Run's to report
		for _, m := range expanded.Models {
			names = append(names, m.Name)
		}
	}
	show := newProgress(cio.stderr, slog.New(slog.NewTextHandler(cio.stderr, nil)), names, (*exp.CV.Folds)*(*exp.CV.Repeats), par.Jobs)
	opt.OnEvent = show.event
	oc, err := experiment.Run(ctx, expPath, exp, opt)
	show.finish()
	if errors.Is(err, model.ErrDiverged) {
		return &exitError{exitTraining, err}
	}
	if err != nil {
		return err
	}
	if err := oc.Report.WriteText(cio.stdout); err != nil {
		return err
	}
	fmt.Fprintf(cio.stdout, "\nResults in %s (the same tables in summary.md, figures in report.html)\n", oc.Dir)
	if !*noHistory {
		path, err := experiment.RecordHistory(expPath, oc.Dir, *history)
		if err != nil {
			return err
		}
		fmt.Fprintf(cio.stderr, "skein run: history %s, plot %s\n", path, experiment.HistoryPlotPath(path))
	}
	err = driftError(cio, oc.Verdict, opt.Against, oc.Dir)
	if oc.ViewsErr != nil {
		// The results are committed, but the run is not what was asked
		// for: a script must not take it for a success.
		if err != nil {
			fmt.Fprintf(cio.stderr, "skein run: %v\n", err)
		}
		return fmt.Errorf("the figures and report.html could not be written: %w; the results are complete in %s: draw them again with skein report %s",
			oc.ViewsErr, oc.Dir, experiment.ShellQuote(oc.Dir))
	}
	return err
}

// driftError returns the exit-4 error for a broken drift rule, after
// printing what the rule could not check; nil when the rule held.
func driftError(cio commandIO, verdict *experiment.DriftReport, prev *experiment.Folder, final string) error {
	if verdict == nil {
		return nil
	}
	for _, u := range verdict.Unchecked {
		fmt.Fprintf(cio.stderr, "skein run: drift not checked: %s\n", u)
	}
	if len(verdict.Breaks) == 0 {
		return nil
	}
	msgs := make([]string, len(verdict.Breaks))
	for i, b := range verdict.Breaks {
		msgs[i] = b.String()
	}
	return &exitError{exitDrift, fmt.Errorf("drift rule broken against %s: %s (results are complete in %s; see %s there)",
		prev.Dir, strings.Join(msgs, "; "), final, experiment.DriftFile)}
}
