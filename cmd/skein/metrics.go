package main

import (
	"context"
	"flag"
	"fmt"
	"os"
	"strings"

	"github.com/skein-neuro/skein/eval"
)

// cmdMetrics scores the predictions in a CSV file:
// skein metrics FILE.csv [--json] [--bins B].
func cmdMetrics(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("metrics", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	asJSON := fs.Bool("json", false, "print the figures as JSON (the layout of a run's metrics.json)")
	bins := fs.Int("bins", eval.DefaultBins, "equal-frequency bins of each side for NMI")
	fs.Usage = func() {
		w := fs.Output()
		describe(w, "metrics")
		fmt.Fprintln(w, "usage: skein metrics FILE [--json] [--bins B]")
		fmt.Fprintln(w, "\nFILE is comma-separated (.csv), or tab-separated (.tsv, or any file whose header")
		fmt.Fprintln(w, "holds tabs and no commas), with a header naming the columns observed and")
		fmt.Fprintln(w, "predicted; rows are grouped by the columns model and target when present, and")
		fmt.Fprintln(w, "scored per fold as well when repeat and fold are present, as in predictions.csv.")
		fmt.Fprintln(w, "Empty, NaN or NA cells are missing values: skipped and counted.")
		fs.PrintDefaults()
	}
	positional, err := positionalArgs(fs, args, 1, "one CSV file")
	if err != nil {
		return err
	}
	if *bins < 1 {
		return badInput(fmt.Errorf("--bins: want an integer ≥ 1, got %d", *bins))
	}
	path := positional[0]
	fh, err := os.Open(path)
	if err != nil {
		return badInput(err)
	}
	defer fh.Close()
	rows, header, err := eval.ReadPredictions(fh, path)
	if err != nil {
		return badInput(err)
	}
	if len(rows) == 0 {
		return badInput(fmt.Errorf("%s: no rows after the header", path))
	}
	if extra := header.Extra(); len(extra) > 0 {
		fmt.Fprintf(cio.stderr, "skein metrics: %s: columns not used: %s\n", path, strings.Join(extra, ", "))
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	summary := eval.Summarize(rows, *bins, header.HasFolds())
	if *asJSON {
		return summary.WriteJSON(cio.stdout)
	}
	fmt.Fprintf(cio.stdout, "%s: %d predictions\n\n", path, len(rows))
	return summary.WriteText(cio.stdout)
}
