package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"text/tabwriter"
	"unicode/utf8"

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
		fmt.Fprintln(w, "usage: skein metrics FILE.csv [--json] [--bins B]")
		fmt.Fprintln(w, "\nScores predictions: Pearson r, Spearman ρ, MAE, median absolute error, RMSE,")
		fmt.Fprintln(w, "R² and NMI. FILE.csv needs a header with the columns observed and predicted;")
		fmt.Fprintln(w, "rows are grouped by the columns model and target when present, and scored per")
		fmt.Fprintln(w, "fold as well when repeat and fold are present, as in a run's predictions.csv.")
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
	return writeMetricsTable(cio.stdout, path, len(rows), header, summary)
}

// writeMetricsTable prints summary for a reader: per model × target a row
// of pooled figures and, with folds, a row of mean ± SD over folds.
func writeMetricsTable(w io.Writer, path string, nRows int, header eval.Header, s *eval.Summary) error {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %d predictions\n\n", path, nRows)
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', tabwriter.AlignRight)
	cols := []string{"model", "target", "figures", "n", "missing"}
	for _, m := range eval.Metrics() {
		cols = append(cols, m.Label())
	}
	// The table aligns right; padding the names to one width lines them up
	// on the left.
	modelWidth, targetWidth := len("model"), len("target")
	for _, g := range s.Groups {
		modelWidth = max(modelWidth, utf8.RuneCountInString(show(g.Model)))
		targetWidth = max(targetWidth, utf8.RuneCountInString(show(g.Target)))
	}
	pad := func(name string, width int) string {
		return name + strings.Repeat(" ", width-utf8.RuneCountInString(name))
	}
	cols[0], cols[1] = pad(cols[0], modelWidth), pad(cols[1], targetWidth)
	fmt.Fprintln(tw, strings.Join(cols, "\t")+"\t")
	for _, g := range s.Groups {
		cells := []string{pad(show(g.Model), modelWidth), pad(show(g.Target), targetWidth), "pooled", strconv.Itoa(g.Pooled.N), strconv.Itoa(g.Pooled.Missing)}
		for _, m := range eval.Metrics() {
			cells = append(cells, formatFigure(g.Pooled.Get(m)))
		}
		fmt.Fprintln(tw, strings.Join(cells, "\t")+"\t")
		if len(g.Folds) == 0 {
			continue
		}
		cells = []string{"", "", fmt.Sprintf("%d folds: mean ± SD", len(g.Folds)), "", ""}
		for _, m := range eval.Metrics() {
			cells = append(cells, formatFigure(g.FoldMean.Get(m))+" ± "+formatFigure(g.FoldSD.Get(m)))
		}
		fmt.Fprintln(tw, strings.Join(cells, "\t")+"\t")
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	b.WriteString("\n")
	if !header.HasFolds() {
		b.WriteString("No fold column: pooled figures only.\n")
	}
	fmt.Fprintf(&b, "n counts complete pairs; missing counts pairs skipped for a NaN. NMI uses %d equal-frequency bins;\n", s.Bins)
	b.WriteString("R² is out of sample (1 − SSres/SStot about the mean of the observed values) and may be negative.\n")
	if note := s.SmallFoldNote(); note != "" {
		b.WriteString(note + "\n")
	}
	for _, g := range s.Groups {
		if undefined := len(g.FoldUndefined); undefined > 0 {
			fmt.Fprintf(&b, "%s/%s: folds where a metric was undefined, left out of its mean ± SD: %v\n", show(g.Model), show(g.Target), g.FoldUndefined)
		}
	}
	b.WriteString("\n" + eval.Disclaimer + "\n")
	_, err := io.WriteString(w, b.String())
	return err
}

// show writes an empty model or target name as "-".
func show(name string) string {
	if name == "" {
		return "-"
	}
	return name
}

// formatFigure writes x with three decimals, "-" when undefined.
func formatFigure(x float64) string {
	if math.IsNaN(x) {
		return "-"
	}
	return strconv.FormatFloat(x, 'f', 3, 64)
}
