package eval

import (
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
)

// A Comparison is one model's line in the comparison table of a run: its
// figures on one target, its permutation p-values, bootstrap intervals of
// pooled r and MAE, and its difference from the best baseline on the same
// folds.
type Comparison struct {
	Model, Target string
	Baseline      bool // whether the model is a baseline (not a network)
	Group         *Group
	// P holds permutation p-values; nil without a permutation test.
	P *Values
	// R and MAE are percentile bootstrap intervals of the pooled values.
	R, MAE Interval
	// Against names the best baseline on this target ("" for the best
	// baseline itself, or when there is none): the baseline with the
	// highest mean Pearson r over folds.
	Against string
	// DiffR and DiffMAE compare this model with Against over the same
	// folds by the corrected resampled t-test (this model minus Against).
	DiffR, DiffMAE TTest
}

// CompareOptions are the settings of Compare.
type CompareOptions struct {
	// Baselines names the models that are baselines.
	Baselines map[string]bool
	// NTrain and NTest are the mean numbers of participants in a training
	// and a test fold, for the corrected t-test.
	NTrain, NTest float64
	// Nulls are the permutation test's results, or nil.
	Nulls []NullDistribution
	// Resamples and Level set the bootstrap: 1000 and 0.95 when zero.
	Resamples int
	Level     float64
	// Seed seeds the bootstrap.
	Seed uint64
}

// Compare builds the comparison table of a run from its summary and its
// prediction rows, in the order of sum.Groups.
func Compare(sum *Summary, rows []Prediction, opt CompareOptions) ([]Comparison, error) {
	if opt.Resamples == 0 {
		opt.Resamples = 1000
	}
	if opt.Level == 0 {
		opt.Level = 0.95
	}
	best := make(map[string]*Group) // target -> best baseline
	for i := range sum.Groups {
		g := &sum.Groups[i]
		if !opt.Baselines[g.Model] {
			continue
		}
		if b := best[g.Target]; b == nil || better(g.FoldMean.Pearson, b.FoldMean.Pearson) {
			best[g.Target] = g
		}
	}
	byGroup := make(map[[2]string][]Prediction)
	for _, r := range rows {
		key := [2]string{r.Model, r.Target}
		byGroup[key] = append(byGroup[key], r)
	}
	var out []Comparison
	for i := range sum.Groups {
		g := &sum.Groups[i]
		c := Comparison{Model: g.Model, Target: g.Target, Baseline: opt.Baselines[g.Model], Group: g}
		for j := range opt.Nulls {
			if nd := &opt.Nulls[j]; nd.Model == g.Model && nd.Target == g.Target {
				c.P = &nd.P
			}
		}
		groupRows := byGroup[[2]string{g.Model, g.Target}]
		rng := rand.New(rand.NewPCG(opt.Seed, uint64(i)))
		var err error
		if c.R, err = BootstrapCI(groupRows, MetricPearson, sum.Bins, opt.Resamples, opt.Level, rng); err != nil {
			return nil, err
		}
		if c.MAE, err = BootstrapCI(groupRows, MetricMAE, sum.Bins, opt.Resamples, opt.Level, rng); err != nil {
			return nil, err
		}
		if b := best[g.Target]; b != nil && b != g && len(g.Folds) > 0 {
			c.Against = b.Model
			diff, err := FoldDifferences(g, b, MetricPearson)
			if err != nil {
				return nil, err
			}
			c.DiffR = CorrectedTTest(diff, opt.NTrain, opt.NTest)
			if diff, err = FoldDifferences(g, b, MetricMAE); err != nil {
				return nil, err
			}
			c.DiffMAE = CorrectedTTest(diff, opt.NTrain, opt.NTest)
		}
		out = append(out, c)
	}
	return out, nil
}

// better reports whether r beats best, NaN losing to anything.
func better(r, best float64) bool {
	return !math.IsNaN(r) && (math.IsNaN(best) || r > best)
}

// WriteComparisonMarkdown writes the comparison table: per target, every
// model with Pearson r and MAE (mean ± SD over folds), their pooled 95%
// bootstrap intervals, permutation p-values, and the difference from the
// best baseline with the corrected resampled t-test.
func WriteComparisonMarkdown(w io.Writer, comps []Comparison) error {
	var b strings.Builder
	var targets []string
	for _, c := range comps {
		if !slices.Contains(targets, c.Target) {
			targets = append(targets, c.Target)
		}
	}
	for _, target := range targets {
		fmt.Fprintf(&b, "\n### %s: comparison\n\n", escapeMarkdown(target))
		b.WriteString("| model | Pearson r | CI of pooled r | p (r) | MAE | CI of pooled MAE | p (MAE) | Δr vs best baseline (t-test p) | ΔMAE (t-test p) |\n")
		b.WriteString("| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |\n")
		for _, c := range comps {
			if c.Target == target {
				writeComparisonRow(&b, c)
			}
		}
	}
	if len(comps) > 0 {
		fmt.Fprintf(&b, "\nPearson r and MAE: mean ± SD over test folds [pooled]. CI: %.0f%% percentile bootstrap"+
			" over participants (%d resamples). p: permutation p-value, (1 + #{null at least as good}) / (1 + permutations). "+
			"Δ: mean difference from the best baseline (highest mean r over folds) over the same folds, tested by the "+
			"corrected resampled t-test (Nadeau & Bengio 2003).\n", 100*comps[0].R.Level, comps[0].R.Resamples)
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func writeComparisonRow(b *strings.Builder, c Comparison) {
	name := escapeMarkdown(c.Model)
	if c.Baseline {
		name += " (baseline)"
	}
	pr, pm := "–", "–"
	if c.P != nil {
		pr, pm = formatP(c.P.Pearson), formatP(c.P.MAE)
	}
	vsR, vsMAE := "–", "–"
	if c.Against != "" {
		vsR = fmt.Sprintf("%s vs %s (p %s)", formatDiff(c.DiffR.MeanDiff), escapeMarkdown(c.Against), formatP(c.DiffR.P))
		vsMAE = fmt.Sprintf("%s (p %s)", formatDiff(c.DiffMAE.MeanDiff), formatP(c.DiffMAE.P))
	} else if c.Baseline {
		vsR = "best baseline"
	}
	fmt.Fprintf(b, "| %s | %s | [%s, %s] | %s | %s | [%s, %s] | %s | %s | %s |\n", name,
		c.Group.cell(MetricPearson), formatNumber(c.R.Lower), formatNumber(c.R.Upper), pr,
		c.Group.cell(MetricMAE), formatNumber(c.MAE.Lower), formatNumber(c.MAE.Upper), pm,
		vsR, vsMAE)
}

func formatDiff(d float64) string {
	if math.IsNaN(d) {
		return "–"
	}
	return fmt.Sprintf("%+.3f", d)
}

func formatP(p float64) string {
	switch {
	case math.IsNaN(p):
		return "–"
	case p < 0.001:
		return "<0.001"
	}
	return fmt.Sprintf("%.3f", p)
}
