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
	summary string
	run     func(ctx context.Context, io commandIO, args []string) error
}

// commandIO is where a command writes.
type commandIO struct {
	stdout, stderr io.Writer
}

func commands() []command {
	return []command{
		{"synth", "invent a synthetic cohort and write it as a lab's files", cmdSynth},
		{"check", "load and check the cohort of an experiment file", cmdCheck},
		{"run", "cross-validate every model of an experiment file", cmdRun},
		{"metrics", "score predictions in a CSV file", cmdMetrics},
		{"report", "draw the figures and report.html of a finished run folder", cmdReport},
		{"compare", "set two finished runs side by side", cmdCompare},
		{"plan", "split a run into units for a cluster's job array", cmdPlan},
		{"merge", "combine the finished units of a plan into a run folder", cmdMerge},
		{"predict", "predict new participants with a saved model", cmdPredict},
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
	fmt.Fprintln(w, "\nRun \"skein COMMAND -h\" for a command's options.")
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
