package eval

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"
	"unicode/utf8"
)

// WriteText writes s as a plain-text table for a terminal: per model ×
// target a row of pooled figures and, with folds, a row of mean ± SD over
// folds, then notes on the figures and Disclaimer.
func (s *Summary) WriteText(w io.Writer) error {
	var b strings.Builder
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', tabwriter.AlignRight)
	cols := []string{"model", "target", "figures", "n", "missing"}
	for _, m := range Metrics() {
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
		for _, m := range Metrics() {
			cells = append(cells, formatFigure(g.Pooled.Get(m)))
		}
		fmt.Fprintln(tw, strings.Join(cells, "\t")+"\t")
		if len(g.Folds) == 0 {
			continue
		}
		cells = []string{"", "", fmt.Sprintf("%d folds: mean ± SD", len(g.Folds)), "", ""}
		for _, m := range Metrics() {
			cells = append(cells, formatFigure(g.FoldMean.Get(m))+" ± "+formatFigure(g.FoldSD.Get(m)))
		}
		fmt.Fprintln(tw, strings.Join(cells, "\t")+"\t")
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	b.WriteString("\n")
	if !slices.ContainsFunc(s.Groups, func(g Group) bool { return len(g.Folds) > 0 }) {
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
	b.WriteString("\n" + Disclaimer + "\n")
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
