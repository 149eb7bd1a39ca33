package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
)

func cmdPlan(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("plan", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	var opt experiment.PlanOptions
	fs.StringVar(&opt.Out, "out", "", "run folder merge will create; the plan goes into its work folder OUT.partial (required)")
	fs.IntVar(&opt.Block, "block", 0, "permutations per unit (default 10 for networks, permutation.chunk for baselines, whose blocks are rounded up to a multiple of it)")
	fs.IntVar(&opt.Bins, "bins", eval.DefaultBins, "equal-frequency bins for NMI and AMI")
	fs.BoolVar(&opt.Force, "force", false, "start the plan over, deleting finished units of an earlier plan, and let merge replace an existing run folder")
	fs.StringVar(&opt.Skein, "skein", "", "the skein program the job script runs (default this one)")
	so := &opt.Slurm
	fs.StringVar(&so.Time, "time", "01:00:00", "SLURM time limit of one unit")
	fs.StringVar(&so.Mem, "mem", "4G", "SLURM memory of one unit")
	fs.IntVar(&so.CPUs, "cpus", 1, "SLURM CPUs of one unit (also its --jobs)")
	fs.StringVar(&so.Partition, "partition", "", "SLURM partition (default the cluster's)")
	fs.StringVar(&so.Account, "account", "", "SLURM account (default yours)")
	fs.IntVar(&so.MaxRunning, "max-running", 0, "at most this many units at once (0: no limit)")
	fs.Func("sbatch", "an extra `OPTION` line for the job script, e.g. --qos=short (repeatable)", func(s string) error {
		if strings.ContainsAny(s, "\n\r") {
			return errors.New("one option per --sbatch, without line breaks")
		}
		so.Extra = append(so.Extra, s)
		return nil
	})
	fs.Usage = func() {
		describe(cio.stderr, "plan")
		fmt.Fprintln(cio.stderr, "usage: skein plan EXPERIMENT.toml --out DIR [--block N] [--time T] [--mem M] [--cpus C] [--partition P] [--force]")
		fs.PrintDefaults()
	}
	positional, err := positionalArgs(fs, args, 1, "one experiment file")
	if err != nil {
		return err
	}
	if so.CPUs < 1 {
		return badInput(fmt.Errorf("--cpus: need at least 1, found %d", so.CPUs))
	}
	if so.MaxRunning < 0 {
		return badInput(fmt.Errorf("--max-running: must not be negative, found %d", so.MaxRunning))
	}
	if opt.Skein == "" {
		if opt.Skein, err = os.Executable(); err != nil {
			return fmt.Errorf("finding this program for the job script (pass --skein): %w", err)
		}
	}
	if opt.Skein, err = filepath.Abs(opt.Skein); err != nil {
		return err
	}
	s, err := experiment.Plan(positional[0], opt, cio.stdout)
	if err != nil {
		return err
	}
	q := experiment.ShellQuote
	fmt.Fprintf(cio.stdout, "skein plan: %d units (%d model × fold units, %d permutation blocks, %d sample-size points) in %s\n",
		s.Units, s.ModelUnits, s.PermutationUnits, s.SampleSizeUnits, s.Dir)
	if s.Resumed {
		fmt.Fprintf(cio.stdout, "The work folder held this experiment already: its finished units are kept and will be skipped.\n")
	}
	fmt.Fprintf(cio.stdout, "\nOn a SLURM cluster:    sbatch %s\n", q(s.Job))
	if s.Units > 1000 {
		fmt.Fprintf(cio.stdout, "                       (clusters often cap an array at 1001 tasks, MaxArraySize: submit it in parts with --array=0-999, --array=1000-1999, ...)\n")
	}
	fmt.Fprintf(cio.stdout, "Without a scheduler:   tail -n +2 %s | cut -f1 | xargs -P 2 -I{} %s run %s --out %s --jobs 1 --unit {}\n",
		q(s.UnitsTable), q(opt.Skein), q(s.Experiment), q(s.Out))
	fmt.Fprintf(cio.stdout, "Then:                  %s merge %s\n", q(opt.Skein), q(s.Out))
	return nil
}

// unitIndex returns the unit a run was asked for: --unit, else
// SLURM_ARRAY_TASK_ID when the run folder holds a plan (so that a plain
// skein run inside some other job array is not mistaken for a unit).
func unitIndex(fs *flag.FlagSet, unit int, out string) (int, bool, error) {
	set := false
	fs.Visit(func(f *flag.Flag) { set = set || f.Name == "unit" })
	if set {
		if out == "" {
			return 0, false, badInput(errors.New("--unit needs the --out folder of a plan"))
		}
		if unit < 0 {
			return 0, false, badInput(fmt.Errorf("--unit: must not be negative, found %d", unit))
		}
		return unit, true, nil
	}
	task, ok := os.LookupEnv("SLURM_ARRAY_TASK_ID")
	if !ok || out == "" || !experiment.HasPlan(out) {
		return 0, false, nil
	}
	k, err := strconv.Atoi(task)
	if err != nil || k < 0 {
		return 0, false, badInput(fmt.Errorf("SLURM_ARRAY_TASK_ID: want a unit index ≥ 0, found %q", task))
	}
	return k, true, nil
}
