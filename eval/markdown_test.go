package eval

import (
	"bytes"
	"regexp"
	"strings"
	"testing"
)

// TestEscapeMarkdown: every character that starts Markdown syntax or raw
// HTML is backslash-escaped (CommonMark spec 0.31, section 2.4: any ASCII
// punctuation may be escaped and then stands for itself).
func TestEscapeMarkdown(t *testing.T) {
	for _, tt := range []struct{ in, want string }{
		{"fc+sc-net", "fc+sc-net"},
		{"ridge[alphas=10]", `ridge\[alphas=10\]`},
		{"<img src=x onerror=alert(1)>", `\<img src=x onerror=alert(1)\>`},
		{"*bold* _it_ `code` ~~s~~", "\\*bold\\* \\_it\\_ \\`code\\` \\~\\~s\\~\\~"},
		{`a|b\c &amp;`, `a\|b\\c \&amp;`},
		{"two\nlines\r\nhere", "two lines here"},
	} {
		if got := EscapeMarkdown(tt.in); got != tt.want {
			t.Errorf("EscapeMarkdown(%q) = %q, want %q", tt.in, got, tt.want)
		}
	}
}

// TestSummaryMarkdownEscapesNames: model and target names holding raw
// HTML and Markdown reach summary tables only escaped.
func TestSummaryMarkdownEscapesNames(t *testing.T) {
	const model, target = "<script>alert(1)</script>", "*memory*_|x"
	var rows []Prediction
	for i := range 12 {
		rows = append(rows, Prediction{ParticipantID: string(rune('a' + i)), Model: model, Target: target,
			Fold: i % 2, Observed: float64(i), Predicted: float64(i%5) + 0.5})
	}
	var b bytes.Buffer
	if err := Summarize(rows, DefaultBins, true).WriteMarkdown(&b); err != nil {
		t.Fatal(err)
	}
	md := b.String()
	if regexp.MustCompile(`(^|[^\\])<`).MatchString(md) || !strings.Contains(md, `\<script\>alert(1)\</script\>`) {
		t.Errorf("model name not escaped:\n%s", md)
	}
	// An unescaped *, _ or | of the target would open emphasis or a column.
	if regexp.MustCompile(`(^|[^\\])\*memory`).MatchString(md) || !strings.Contains(md, `\*memory\*\_\|x`) {
		t.Errorf("target name not escaped:\n%s", md)
	}
}

func TestWrapText(t *testing.T) {
	for _, tt := range []struct {
		in   string
		w    int
		want string
	}{
		{"a bb ccc", 4, "a bb\nccc\n"},
		{"a  bb\nccc", 80, "a bb ccc\n"},
		{"longword a", 3, "longword\na\n"},
		{"", 5, ""},
	} {
		if got := WrapText(tt.in, tt.w); got != tt.want {
			t.Errorf("WrapText(%q, %d) = %q, want %q", tt.in, tt.w, got, tt.want)
		}
	}
}
