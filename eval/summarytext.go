package eval

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
)

// WriteText writes s as plain-text tables for a terminal, at most
// TextWidth characters wide (split into parts that repeat the model and
// target, see writeTextTable): per model × target a row of pooled
// figures and, with folds, a row of mean ± SD over folds; then notes on
// the figures and Disclaimer.
func (s *Summary) WriteText(w io.Writer) error {
	var b strings.Builder
	s.writeTables(&b)
	b.WriteString("\n")
	var notes strings.Builder
	if !slices.ContainsFunc(s.Groups, func(g Group) bool { return len(g.Folds) > 0 }) {
		notes.WriteString("No fold column: pooled figures only. ")
	}
	fmt.Fprintf(&notes, "n counts complete pairs; missing counts pairs skipped for a NaN. NMI uses %d equal-frequency bins. ", s.Bins)
	notes.WriteString("R² is out of sample (1 − SSres/SStot about the mean of the observed values) and may be negative.")
	b.WriteString(WrapText(notes.String(), TextWidth))
	if note := s.SmallFoldNote(); note != "" {
		b.WriteString(WrapText(note, TextWidth))
	}
	for _, g := range s.Groups {
		if note := undefinedNote(g.FoldUndefined); note != "" {
			b.WriteString(WrapText(fmt.Sprintf("%s/%s: %s", show(g.Model), show(g.Target), note), TextWidth))
		}
	}
	if len(s.Labels) > 0 {
		b.WriteString("\n")
		s.writeLabelTable(&b)
	}
	b.WriteString("\n" + WrapText(Disclaimer, TextWidth))
	_, err := io.WriteString(w, b.String())
	return err
}

// writeTables writes the tables of WriteText.
func (s *Summary) writeTables(b *strings.Builder) {
	header := []string{"model", "target", "figures", "n", "missing"}
	for _, m := range Metrics() {
		header = append(header, m.Label())
	}
	var rows [][]string
	for _, g := range s.Groups {
		row := []string{show(g.Model), show(g.Target), "pooled", strconv.Itoa(g.Pooled.N), strconv.Itoa(g.Pooled.Missing)}
		for _, m := range Metrics() {
			row = append(row, formatFigure(g.Pooled.Get(m)))
		}
		rows = append(rows, row)
		if len(g.Folds) == 0 {
			continue
		}
		row = []string{"", "", fmt.Sprintf("%d folds", len(g.Folds)), "", ""}
		for _, m := range Metrics() {
			row = append(row, formatFigure(g.FoldMean.Get(m))+" ± "+formatFigure(g.FoldSD.Get(m)))
		}
		rows = append(rows, row)
	}
	writeTextTable(b, header, rows, 3, TextWidth)
	if slices.ContainsFunc(s.Groups, func(g Group) bool { return len(g.Folds) > 0 }) {
		b.WriteString("(\"N folds\": mean ± SD over the test folds of all repeats)\n")
	}
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

// undefinedNote says in words in how many folds each metric of undefined
// was undefined (NaN), such as "Pearson r undefined in 2 folds, NMI in 1
// fold, left out of their mean ± SD"; "" when none was.
func undefinedNote(undefined map[Metric]int) string {
	var parts []string
	for _, m := range Metrics() {
		n := undefined[m]
		if n == 0 {
			continue
		}
		folds := "folds"
		if n == 1 {
			folds = "fold"
		}
		parts = append(parts, fmt.Sprintf("%s in %d %s", m.Label(), n, folds))
	}
	if len(parts) == 0 {
		return ""
	}
	return "undefined " + strings.Join(parts, ", ") + " (left out of the mean ± SD over folds)"
}

// writeLabelTable writes the class labels' table of WriteText: per model
// and label, the pooled metrics and the mean ± SD over folds.
func (s *Summary) writeLabelTable(b *strings.Builder) {
	header := []string{"model", "label", "figures", "n"}
	for _, m := range ClassMetrics() {
		header = append(header, m.Label())
	}
	var rows [][]string
	for _, g := range s.Labels {
		row := []string{show(g.Model), show(g.Label), "pooled", strconv.Itoa(g.N)}
		for _, m := range ClassMetrics() {
			row = append(row, formatFigure(g.Pooled.Get(m)))
		}
		rows = append(rows, row)
		if len(g.Folds) == 0 {
			continue
		}
		row = []string{"", "", fmt.Sprintf("%d folds", len(g.Folds)), ""}
		for _, m := range ClassMetrics() {
			row = append(row, formatFigure(g.FoldMean.Get(m))+" ± "+formatFigure(g.FoldSD.Get(m)))
		}
		rows = append(rows, row)
	}
	writeTextTable(b, header, rows, 3, TextWidth)
	b.WriteString(WrapText("Class labels: n counts test predictions (a participant once per repeat); AUC within folds, "+
		"the headline, ranks each positive only against the negatives of its own test fold, pooled AUC all test "+
		"predictions together (biased low when the folds are not stratified on the label); AUC is one-vs-rest "+
		"for more than two classes; sensitivity and specificity are of the second class at the threshold (cv.threshold).", TextWidth))
}
