package report

import (
	"math"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
)

// TestAnswerPanelsHoldEveryInterval: the axes of the answer chart reach
// past every interval end, so that no whisker or cap is cut by the frame,
// and the r axis shows chance (r = 0).
func TestAnswerPanelsHoldEveryInterval(t *testing.T) {
	iv := func(est, lo, hi float64) eval.Interval { return eval.Interval{Estimate: est, Lower: lo, Upper: hi} }
	tests := []struct {
		name  string
		comps []eval.Comparison
	}{
		{"positive r", []eval.Comparison{
			{Model: "ridge", Baseline: true, IsReference: true, R: iv(0.3, 0.12, 0.44), MAE: iv(4.5, 4.1, 5.2)},
			{Model: "net", Reference: "ridge", R: iv(0.41, 0.2, 0.93), MAE: iv(4.2, 3.1, 4.9)},
		}},
		{"negative and undefined r", []eval.Comparison{
			{Model: "mean", Baseline: true, R: iv(math.NaN(), math.NaN(), math.NaN()), MAE: iv(7, 6.5, 9.5)},
			{Model: "net", R: iv(-0.2, -0.55, 0.1), MAE: iv(6.8, 6.1, 7.3)},
		}},
	}
	for _, tt := range tests {
		row, k, _, err := answerPanels("recall", tt.comps, []string{"net"})
		if err != nil {
			t.Fatal(err)
		}
		if len(row) != 2 || len(k) == 0 {
			t.Fatalf("%s: %d panels, %d key entries", tt.name, len(row), len(k))
		}
		for i, p := range row {
			lo, hi := math.Inf(1), math.Inf(-1)
			if i == 0 {
				lo, hi = 0, 0 // chance
			}
			for _, c := range tt.comps {
				v := c.R
				if i == 1 {
					v = c.MAE
				}
				if !math.IsNaN(v.Estimate) {
					lo, hi = math.Min(lo, v.Lower), math.Max(hi, v.Upper)
				}
			}
			if !(p.X.Min < lo && p.X.Max > hi) {
				t.Errorf("%s, panel %d: axis [%g, %g] does not hold the intervals [%g, %g] with a margin", tt.name, i, p.X.Min, p.X.Max, lo, hi)
			}
			if p.Y.Min >= 0 || p.Y.Max <= float64(len(tt.comps)-1) {
				t.Errorf("%s, panel %d: rows 0..%d outside [%g, %g]", tt.name, i, len(tt.comps)-1, p.Y.Min, p.Y.Max)
			}
		}
	}
}

// TestAnswerIsEscaped: model names reach report.html escaped, in the
// answer, the answer chart's alt text and the model table.
func TestAnswerIsEscaped(t *testing.T) {
	const evil = `<img src=x onerror=alert(1)>`
	exp, err := experiment.ParseExperiment([]byte(`
[cohort]
participants = "p.tsv"
targets = ["recall"]
[cohort.functional]
files = "fc/{participant_id}.tsv"
[[model]]
name = "ridge-fc"
[model.ridge]
[[model]]
name = "` + evil + `"
[model.ridge]
input = "both"
`))
	if err != nil {
		t.Fatal(err)
	}
	g := eval.Group{Model: evil, Target: "recall"}
	r := &Run{Name: "run", Experiment: exp, Summary: &eval.Summary{Groups: []eval.Group{{Model: "ridge-fc", Target: "recall"}, g}},
		Comparisons: []eval.Comparison{
			{Model: "ridge-fc", Target: "recall", Baseline: true, IsReference: true, R: eval.Interval{Estimate: 0.3, Lower: 0.1, Upper: 0.5}},
			{Model: evil, Target: "recall", Baseline: true, Reference: "ridge-fc", R: eval.Interval{Estimate: 0.4, Lower: 0.2, Upper: 0.6},
				DiffR: eval.TTest{J: 5, MeanDiff: 0.1, P: 0.01}},
		}}
	figs, err := r.AnswerFigures()
	if err != nil {
		t.Fatal(err)
	}
	var page strings.Builder
	if err := r.WriteHTML(&page, figs, nil, nil, nil); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(page.String(), evil) {
		t.Error("report.html holds a model name unescaped")
	}
	if !strings.Contains(page.String(), "&lt;img src=x onerror=alert(1)&gt; on recall") {
		t.Error("the answer does not name the model, escaped")
	}
}
