package main

import (
	"context"
	"flag"
	"fmt"
	"os"
	"path/filepath"

	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/experiment/report"
)

// cmdReport rebuilds the figures and report.html of a finished run folder
// from its files, without retraining.
func cmdReport(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("report", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	fs.Usage = func() {
		describe(cio.stderr, "report")
		fmt.Fprintln(cio.stderr, "usage: skein report RUN_DIR")
		fs.PrintDefaults()
	}
	positional, err := positionalArgs(fs, args, 1, "one run folder")
	if err != nil {
		return err
	}
	dir := positional[0]
	if info, err := os.Stat(dir); err != nil {
		return badInput(err)
	} else if !info.IsDir() {
		return badInput(fmt.Errorf("%s is not a folder; want the run folder of skein run", dir))
	}
	figs, err := report.Build(dir)
	if err != nil && figs == nil {
		return badInput(err)
	}
	if err != nil {
		return fmt.Errorf("report.html written, but parts could not be made (listed at its top): %w", err)
	}
	fmt.Fprintf(cio.stdout, "%d figures in %s\nReport: %s\n", len(figs), filepath.Join(dir, experiment.FiguresDir), filepath.Join(dir, experiment.HTMLFile))
	return nil
}

// buildReport writes the region labels and draws the figures and
// report.html into dir, the work folder of a run. A panic while drawing
// is returned as an error so that the run is still kept.
func buildReport(dir string, regions []string) (err error) {
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("drawing the report: %v", p)
		}
	}()
	if err := report.WriteRegions(dir, regions); err != nil {
		return err
	}
	_, err = report.Build(dir)
	return err
}
