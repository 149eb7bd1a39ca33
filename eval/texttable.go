package eval

import (
	"strings"
	"unicode/utf8"
)

// TextWidth is the width, in characters, that the plain-text tables of
// WriteText and WriteComparisonText fit: a table wider than that is split
// into several, each repeating the key columns.
const TextWidth = 100

// writeTextTable writes a table for a terminal: the first keys columns
// left-aligned and repeated in every part, the others right-aligned and
// spread over as many parts as it takes for each line to fit width
// characters (at least one column a part), parts separated by a blank
// line. Columns are two spaces apart.
func writeTextTable(b *strings.Builder, header []string, rows [][]string, keys, width int) {
	widths := make([]int, len(header))
	for _, row := range append([][]string{header}, rows...) {
		for i, cell := range row {
			widths[i] = max(widths[i], utf8.RuneCountInString(cell))
		}
	}
	keyWidth := 0
	for _, w := range widths[:keys] {
		keyWidth += w + 2
	}
	var parts [][]int
	for i := keys; i < len(header); {
		part := []int{i}
		used := keyWidth + widths[i]
		for i++; i < len(header) && used+2+widths[i] <= width; i++ {
			part = append(part, i)
			used += 2 + widths[i]
		}
		parts = append(parts, part)
	}
	if len(parts) == 0 {
		parts = [][]int{nil}
	}
	for k, part := range parts {
		if k > 0 {
			b.WriteString("\n")
		}
		for _, row := range append([][]string{header}, rows...) {
			var line strings.Builder
			for i := range keys {
				line.WriteString(row[i] + strings.Repeat(" ", widths[i]-utf8.RuneCountInString(row[i])+2))
			}
			for j, i := range part {
				if j > 0 {
					line.WriteString("  ")
				}
				line.WriteString(strings.Repeat(" ", widths[i]-utf8.RuneCountInString(row[i])) + row[i])
			}
			b.WriteString(strings.TrimRight(line.String(), " ") + "\n")
		}
	}
}

// WrapText breaks text into lines of at most width characters at spaces,
// each ended by a newline: a paragraph for a terminal. A word longer than
// width stands alone on its line.
func WrapText(text string, width int) string {
	var b strings.Builder
	n := 0
	for _, word := range strings.Fields(text) {
		l := utf8.RuneCountInString(word)
		switch {
		case n == 0:
		case n+1+l > width:
			b.WriteByte('\n')
			n = 0
		default:
			b.WriteByte(' ')
			n++
		}
		b.WriteString(word)
		n += l
	}
	if n > 0 {
		b.WriteByte('\n')
	}
	return b.String()
}
