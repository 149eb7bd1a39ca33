package main

import (
	"context"
	"errors"
	"flag"
	"fmt"

	"github.com/skein-neuro/skein/experiment"
)

func cmdMerge(ctx context.Context, cio commandIO, args []string) error {
	flags := flag.NewFlagSet("merge", flag.ContinueOnError)
	flags.SetOutput(cio.stderr)
	force := flags.Bool("force", false, "replace an existing run folder DIR")
	flags.Usage = func() {
		describe(cio.stderr, "merge")
		fmt.Fprintln(cio.stderr, "usage: skein merge DIR [--force]")
		flags.PrintDefaults()
	}
	positional, err := positionalArgs(flags, args, 1, "the run folder of one plan")
	if err != nil {
		return err
	}
	oc, units, err := experiment.Merge(ctx, positional[0], *force, buildReport)
	var missing *experiment.MissingUnitsError
	if errors.As(err, &missing) {
		fmt.Fprintln(cio.stderr, "skein merge: "+missing.Advice[0])
		for _, line := range missing.Advice[1:] {
			fmt.Fprintln(cio.stderr, line)
		}
	}
	if err != nil {
		return err
	}
	if err := oc.Report.WriteText(cio.stdout); err != nil {
		return err
	}
	fmt.Fprintf(cio.stdout, "\nMerged %d units; results in %s (the same tables in summary.md)\n", units, oc.Dir)
	if oc.ViewsErr != nil {
		return fmt.Errorf("the figures and report.html could not be written: %w; the results are complete in %s: draw them again with skein report %s",
			oc.ViewsErr, oc.Dir, experiment.ShellQuote(oc.Dir))
	}
	return nil
}
