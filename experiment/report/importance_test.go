package report

import (
	"math"
	"strings"
	"testing"
)

// TestSummarizeImportance checks the fold mean, the ranking and the
// stability columns on three hand-made 3 × 3 maps.
func TestSummarizeImportance(t *testing.T) {
	// Edges (0,1), (0,2), (1,2) at row-major positions 1, 2 and 5 (and
	// their mirrors 3, 6, 7).
	sym := func(a, b, c float64) []float64 { return []float64{0, a, b, a, 0, c, b, c, 0} }
	maps := [][]float64{sym(3, -1, 0.5), sym(2, 1, 0.5), sym(4, -3, 0.5)}
	s := summarizeImportance("m", "t", maps)
	if s.P != 3 || s.Folds != 3 {
		t.Fatalf("P %d, folds %d", s.P, s.Folds)
	}
	if s.Mean[1] != 3 || s.Mean[3] != 3 || s.Mean[2] != -1 || s.Mean[5] != 0.5 {
		t.Errorf("mean %v", s.Mean)
	}
	if len(s.Top) != 3 {
		t.Fatalf("%d ranked edges, want all 3", len(s.Top))
	}
	want := []EdgeStability{
		{I: 0, J: 1, Mean: 3, InTop: 1, SameSign: 1},
		{I: 0, J: 2, Mean: -1, InTop: 1, SameSign: 2.0 / 3},
		{I: 1, J: 2, Mean: 0.5, InTop: 1, SameSign: 1},
	}
	for k, w := range want {
		if g := s.Top[k]; g.I != w.I || g.J != w.J || g.Mean != w.Mean || g.InTop != w.InTop || math.Abs(g.SameSign-w.SameSign) > 1e-15 {
			t.Errorf("rank %d: %+v, want %+v", k+1, g, w)
		}
	}
	// Region 0 has |3| + |−1|, region 1 |3| + |0.5|, region 2 |−1| + |0.5|.
	if s.Regions[0].Region != 0 || s.Regions[0].Strength != 4 || s.Regions[2].Region != 2 {
		t.Errorf("regions %+v", s.Regions)
	}
}

func TestMarkdownHTMLEscapes(t *testing.T) {
	md := "# title\n\nA <b>paragraph</b>\n\n| model | n |\n| --- | ---: |\n| a\\|b <script> | 3 |\n\n> note & caution\n\n- first <i>\n- second\n"
	got := string(markdownHTML(md))
	for _, want := range []string{
		"<p>A &lt;b&gt;paragraph&lt;/b&gt;</p>",
		"<th>model</th><th class=\"num\">n</th>",
		"<td>a|b &lt;script&gt;</td><td class=\"num\">3</td>",
		"<blockquote>note &amp; caution</blockquote>",
		"<ul>\n<li>first &lt;i&gt;</li>\n<li>second</li>\n</ul>",
	} {
		if !strings.Contains(got, want) {
			t.Errorf("markdownHTML lacks %q:\n%s", want, got)
		}
	}
	if strings.Contains(got, "title") {
		t.Error("the level-1 title was kept")
	}
}
