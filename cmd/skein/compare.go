package main

import (
	"bytes"
	"context"
	"errors"
	"flag"
	"fmt"
	"path/filepath"
	"strings"
	"time"

	"github.com/skein-neuro/skein/experiment"
)

func cmdCompare(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("compare", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	markdown := fs.Bool("markdown", false, "write Markdown tables instead of text")
	asJSON := fs.Bool("json", false, "write JSON instead of text")
	fs.Usage = func() {
		fmt.Fprintln(cio.stderr, "usage: skein compare RUN_A RUN_B [--markdown | --json]")
		fmt.Fprintln(cio.stderr, "\nSets two finished run folders side by side: participants added and removed,\n"+
			"experiment settings and versions that differ, and every pooled metric with its\n"+
			"change, marked when larger than the fold-to-fold SD.")
		fs.PrintDefaults()
	}
	positional, err := positionalArgs(fs, args, 2, "two run folders")
	if err != nil {
		return err
	}
	if *markdown && *asJSON {
		return badInput(errors.New("choose one of --markdown and --json"))
	}
	var read [2]*experiment.Folder
	for i, dir := range positional {
		if read[i], err = experiment.ReadFolder(dir); err != nil {
			return badInput(err)
		}
	}
	c := experiment.CompareRuns(read[0], read[1])
	switch {
	case *markdown:
		return c.WriteMarkdown(cio.stdout)
	case *asJSON:
		return c.WriteJSON(cio.stdout)
	}
	return c.WriteText(cio.stdout)
}

// The files skein run --against and a sample-size curve add to a run folder.
const (
	driftFile          = "drift.md"        // the comparison with the earlier run and the drift verdict
	sampleSizePlotFile = "sample_size.png" // the plot of sample_size.csv
)

// readAgainst reads the earlier run of --against before anything is
// trained, so that a wrong folder fails at once; nil when dir is "".
func readAgainst(cio commandIO, dir string, exp *experiment.Experiment) (*experiment.Folder, error) {
	if dir == "" {
		return nil, nil
	}
	if real, err := filepath.EvalSymlinks(dir); err == nil {
		dir = real // name the night a "latest" link points to
	}
	prev, err := experiment.ReadFolder(dir)
	if err != nil {
		return nil, badInput(fmt.Errorf("--against: %w", err))
	}
	if !exp.Drift.Enabled() {
		fmt.Fprintln(cio.stderr, "skein run: the experiment has no [drift] rule: --against only writes the comparison ("+driftFile+")")
	}
	return prev, nil
}

// writeNightly adds to the work folder of rd the plot of the sample-size
// curve and, with an earlier run, drift.md: the drift verdict and the
// comparison. It returns the verdict (nil without an earlier run).
func writeNightly(rd *experiment.RunDir, report *experiment.Report, prev *experiment.Folder, rule experiment.Drift) (*experiment.DriftReport, error) {
	if report.SampleSize != nil {
		var png bytes.Buffer
		if err := experiment.PlotSampleSize(&png, report.SampleSize); err != nil {
			return nil, fmt.Errorf("sample-size plot: %w", err)
		}
		if err := rd.WriteFile(sampleSizePlotFile, png.Bytes()); err != nil {
			return nil, err
		}
	}
	if prev == nil {
		return nil, nil
	}
	cur, err := experiment.ReadFolder(rd.Partial)
	if err != nil {
		return nil, err
	}
	cur.Dir = rd.Final
	verdict := experiment.CheckDrift(rule, prev, cur)
	var md bytes.Buffer
	fmt.Fprintf(&md, "# Drift against %s\n\n", prev.Dir)
	switch {
	case !rule.Enabled():
		md.WriteString("The experiment has no [drift] rule.\n")
	case len(verdict.Breaks) == 0:
		md.WriteString("The rerun keeps to the experiment's [drift] rule.\n")
	default:
		md.WriteString("The rerun **broke** the experiment's [drift] rule:\n\n")
		for _, b := range verdict.Breaks {
			fmt.Fprintf(&md, "- %s\n", b)
		}
	}
	if len(verdict.Unchecked) > 0 {
		md.WriteString("\nNot checked:\n\n")
		for _, u := range verdict.Unchecked {
			fmt.Fprintf(&md, "- %s\n", u)
		}
	}
	md.WriteString("\n")
	if err := experiment.CompareRuns(prev, cur).WriteMarkdown(&md); err != nil {
		return nil, err
	}
	return verdict, rd.WriteFile(driftFile, md.Bytes())
}

// recordHistory appends the committed run's headline figures to the
// history file (default history.csv beside the run folder) and redraws its
// plot.
func recordHistory(cio commandIO, final, path string) error {
	if path == "" {
		path = filepath.Join(filepath.Dir(final), experiment.HistoryFile)
	}
	cur, err := experiment.ReadFolder(final)
	if err != nil {
		return err
	}
	if err := experiment.UpdateHistory(path, cur, time.Now()); err != nil {
		return fmt.Errorf("history (the run itself is complete in %s): %w", final, err)
	}
	fmt.Fprintf(cio.stderr, "skein run: history %s, plot %s\n", path, experiment.HistoryPlotPath(path))
	return nil
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
		prev.Dir, strings.Join(msgs, "; "), final, driftFile)}
}
