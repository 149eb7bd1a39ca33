// Command skein loads connectome cohorts, trains graph-filter networks and
// baselines under cross-validation and reports how well they predict
// behavioural and clinical scores.
//
// Usage:
//
//	skein COMMAND [options] ARGS
//
// Run "skein help" for the list of commands. skein is research software: it
// is not a diagnostic device.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
	"syscall"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/train"
)

// Exit codes, documented in the README.
const (
	exitOK          = 0
	exitFailure     = 1 // an unexpected failure: a bug or the machine
	exitBadInput    = 2 // bad command line, experiment file or cohort files
	exitTraining    = 3 // training failed: a diverging loss or NaN
	exitDrift       = 4 // skein run --against: the rerun broke the experiment's [drift] rule
	exitInterrupted = 130
)

// command is one subcommand of skein.
type command struct {
	name    string
	summary string // one line, for the list of commands
	// about is the paragraph "skein NAME -h" opens with: what the command
	// does, what it reads and what it writes.
	about string
	run   func(ctx context.Context, io commandIO, args []string) error
}

// commandIO is where a command writes.
type commandIO struct {
	stdout, stderr io.Writer
}

func commands() []command {
	return []command{
		{"synth", "invent a synthetic cohort and write it as a lab's files",
			"Invents a cohort (participants, connectomes and scores of a fictional study) with a " +
				"known planted signal and writes it as a lab's files: participants.tsv, fc/, sc/, " +
				"regions.txt, planted.tsv (the truth) and experiment.toml for \"skein check\".", cmdSynth},
		{"check", "load and check the cohort of an experiment file",
			"Loads the [cohort] of the experiment file, checks every file and prints a summary: " +
				"included and excluded participants with reasons, regions, per-modality statistics, " +
				"scores, covariate codings and outlier flags. It also checks every setting against the " +
				"cohort as skein run does (folds, inner validation, columns, model names), lists every " +
				"problem at once and exits with code 2 when there is one. Nothing is trained or written.", cmdCheck},
		{"run", "cross-validate every model of an experiment file",
			"Checks the cohort of the experiment file, trains and tests every model under its " +
				"repeated k-fold cross-validation (all models on the same splits), runs the " +
				"permutation test and the comparison with the reference baseline when asked, and " +
				"writes a run folder: predictions.csv, metrics.json, summary.md, report.html, " +
				"figures and the saved fold models. The summary table is printed when it ends.", cmdRun},
		{"metrics", "score predictions in a CSV or TSV file",
			"Scores predictions: Pearson r, r within folds, Spearman ρ, MAE, median absolute " +
				"error, RMSE, R², NMI and AMI, of any CSV or TSV file with the columns observed and " +
				"predicted, such as a run's predictions.csv.", cmdMetrics},
		{"report", "draw the figures and report.html of a finished run folder",
			"Draws the figures of a finished run folder into RUN_DIR/figures and writes " +
				"RUN_DIR/report.html from the run's files, without training anything again.", cmdReport},
		{"compare", "set two finished runs side by side",
			"Sets two finished run folders side by side: participants added and removed, " +
				"experiment settings and versions that differ, and every pooled metric with its " +
				"change, marked when larger than the fold-to-fold SD.", cmdCompare},
		{"plan", "split a run into units for a cluster's job array",
			"Splits the run of an experiment file into units (model × repeat × fold, in blocks) " +
				"and writes into DIR.partial the plan and a SLURM job-array script that runs each " +
				"unit with \"skein run --unit K\"; \"skein merge DIR\" then combines them.", cmdPlan},
		{"merge", "combine the finished units of a plan into a run folder",
			"Combines the finished units of the plan in DIR.partial (skein plan) into the run " +
				"folder DIR, as \"skein run\" would have written it, and lists the units still missing.", cmdMerge},
		{"predict", "predict new participants with a saved model",
			"Predicts the scores of new participants with a model saved by a run: their matrices " +
				"are preprocessed as at training time and the preparation fitted on the model's " +
				"training participants is replayed. The new participants need no scores.", cmdPredict},
		{"version", "print skein's version", "Prints skein's module version, the revision of its " +
			"source when it was built from a repository, and the Go version that built it.", cmdVersion},
	}
}

// describe writes the paragraph that opens "skein NAME -h", wrapped at 80
// columns, and a blank line.
func describe(w io.Writer, name string) {
	for _, c := range commands() {
		if c.name == name {
			fmt.Fprintln(w, eval.WrapText(c.about, 80))
		}
	}
}

func main() {
	// Single-threaded BLAS in every command unless OPENBLAS_NUM_THREADS
	// says otherwise, so that no result depends on how work is spread
	// (see train.ChooseParallelism).
	train.ApplyBLASThreads(1)
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := run(ctx, os.Args[1:], commandIO{os.Stdout, os.Stderr})
	stop()
	os.Exit(code)
}

func run(ctx context.Context, args []string, cio commandIO) int {
	if len(args) > 0 && (args[0] == "--version" || args[0] == "-version") {
		fmt.Fprintln(cio.stdout, version())
		return exitOK
	}
	if len(args) == 0 || args[0] == "help" || args[0] == "-h" || args[0] == "--help" {
		usage(cio.stdout)
		if len(args) == 0 {
			return exitBadInput
		}
		return exitOK
	}
	for _, c := range commands() {
		if c.name != args[0] {
			continue
		}
		err := c.run(ctx, cio, args[1:])
		if err == nil || errors.Is(err, flag.ErrHelp) {
			return exitOK
		}
		printError(cio.stderr, c.name, err)
		return exitCode(err)
	}
	fmt.Fprintf(cio.stderr, "skein: unknown command %q\n", args[0])
	usage(cio.stderr)
	return exitBadInput
}

// printError writes err as "skein NAME: message", or, when err joins
// several problems (errors.Join gives one a line), as a count and one
// problem a line.
func printError(w io.Writer, name string, err error) {
	msg := err.Error()
	if errors.Is(err, context.Canceled) {
		// A command stopped by Ctrl-C or SIGTERM whose error says no more.
		msg = strings.ReplaceAll(msg, context.Canceled.Error(), "interrupted")
	}
	lines := strings.Split(strings.TrimRight(msg, "\n"), "\n")
	if len(lines) == 1 {
		fmt.Fprintf(w, "skein %s: %s\n", name, lines[0])
		return
	}
	fmt.Fprintf(w, "skein %s: %d problems:\n", name, len(lines))
	for _, l := range lines {
		fmt.Fprintf(w, "  - %s\n", l)
	}
}

func usage(w io.Writer) {
	fmt.Fprintln(w, "usage: skein COMMAND [options] ARGS")
	fmt.Fprintln(w, "\ncommands:")
	for _, c := range commands() {
		fmt.Fprintf(w, "  %-8s %s\n", c.name, c.summary)
	}
	fmt.Fprintln(w, "\nRun \"skein COMMAND -h\" for what a command does and its options, \"skein --version\" for the version.")
	fmt.Fprintln(w, "Research software: not a diagnostic device.")
}

// exitError carries the exit code a failure should end the process with.
type exitError struct {
	code int
	err  error
}

func (e *exitError) Error() string { return e.err.Error() }
func (e *exitError) Unwrap() error { return e.err }

// badInput marks err as caused by the user's input: exit code 2.
func badInput(err error) error {
	if err == nil {
		return nil
	}
	return &exitError{exitBadInput, err}
}

func exitCode(err error) int {
	var ee *exitError
	switch {
	case errors.As(err, &ee):
		return ee.code
	case errors.Is(err, experiment.ErrInput):
		return exitBadInput
	case errors.Is(err, context.Canceled):
		return exitInterrupted
	default:
		return exitFailure
	}
}

// positionalArgs parses args with fs (see parseArgs) and returns its
// positional arguments, which must be exactly n; otherwise it prints the
// usage and returns a bad-input error saying what is wanted. After -h it
// returns flag.ErrHelp, which ends the command with exit code 0.
func positionalArgs(fs *flag.FlagSet, args []string, n int, want string) ([]string, error) {
	positional, err := parseArgs(fs, args)
	if errors.Is(err, flag.ErrHelp) {
		return nil, err
	}
	if err != nil {
		return nil, badInput(err)
	}
	if len(positional) != n {
		fs.Usage()
		return nil, badInput(fmt.Errorf("want %s, got %d arguments", want, len(positional)))
	}
	return positional, nil
}

// parseArgs parses flags that may come before, between or after the
// positional arguments ("skein run FILE --out DIR") and returns the
// positional ones. A lone "--" ends the flags.
func parseArgs(fs *flag.FlagSet, args []string) ([]string, error) {
	var positional []string
	for {
		if err := fs.Parse(args); err != nil {
			return nil, err
		}
		if fs.NArg() == 0 {
			return positional, nil
		}
		if used := len(args) - fs.NArg(); used > 0 && args[used-1] == "--" {
			return append(positional, fs.Args()...), nil
		}
		positional = append(positional, fs.Arg(0))
		args = fs.Args()[1:]
	}
}
