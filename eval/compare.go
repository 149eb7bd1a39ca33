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
// pooled r and MAE, and its difference from the reference baseline on the
// same folds.
type Comparison struct {
	Model, Target string
	Baseline      bool // whether the model is a baseline (not a network)
	Group         *Group
	// P holds permutation p-values; nil without a permutation test.
	P *Values
	// R and MAE are percentile bootstrap intervals of the pooled values;
	// R is of the headline r, r within folds (MetricPearsonWithin).
	R, MAE Interval
	// Reference names the reference baseline of this target that the
	// model is compared with ("" for the reference itself, or when the
	// target has none); IsReference marks the reference itself.
	Reference   string
	IsReference bool
	// DiffR and DiffMAE compare this model with Reference over the same
	// folds by the corrected resampled t-test (this model minus
	// Reference). A fold whose test participants repeat those of an
	// earlier fold is counted once (see DuplicateFolds), so DiffR.J counts
	// distinct folds.
	DiffR, DiffMAE TTest
	// RepeatedFolds counts the folds left out of the t-tests because they
	// repeat an earlier fold's test participants.
	RepeatedFolds int
}

// CompareOptions are the settings of Compare.
type CompareOptions struct {
	// Baselines names the models that are baselines.
	Baselines map[string]bool
	// Reference names, per target, the baseline every other model is
	// compared with (ChooseReference chooses one without looking at the
	// test folds). A target without one gets no differences.
	Reference map[string]string
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
	byGroup := make(map[[2]string][]Prediction)
	for _, r := range rows {
		key := [2]string{r.Model, r.Target}
		byGroup[key] = append(byGroup[key], r)
	}
	var out []Comparison
	for i := range sum.Groups {
		g := &sum.Groups[i]
		c := Comparison{Model: g.Model, Target: g.Target, Baseline: opt.Baselines[g.Model], Group: g,
			IsReference: opt.Reference[g.Target] == g.Model}
		for j := range opt.Nulls {
			if nd := &opt.Nulls[j]; nd.Model == g.Model && nd.Target == g.Target {
				c.P = &nd.P
			}
		}
		groupRows := byGroup[[2]string{g.Model, g.Target}]
		rng := rand.New(rand.NewPCG(opt.Seed, uint64(i)))
		var err error
		if c.R, err = BootstrapCI(groupRows, MetricPearsonWithin, sum.Bins, opt.Resamples, opt.Level, rng); err != nil {
			return nil, err
		}
		if c.MAE, err = BootstrapCI(groupRows, MetricMAE, sum.Bins, opt.Resamples, opt.Level, rng); err != nil {
			return nil, err
		}
		ref := sum.Group(opt.Reference[g.Target], g.Target)
		if ref != nil && ref != g && len(g.Folds) > 0 {
			c.Reference = ref.Model
			repeated := DuplicateFolds(groupRows)
			c.RepeatedFolds = len(repeated)
			if c.DiffR, err = foldTTest(g, ref, MetricPearson, repeated, opt); err != nil {
				return nil, err
			}
			if c.DiffMAE, err = foldTTest(g, ref, MetricMAE, repeated, opt); err != nil {
				return nil, err
			}
		}
		out = append(out, c)
	}
	return out, nil
}

// ChooseReference returns the reference baseline of each target, chosen
// without looking at the test folds, and a sentence saying how:
//
//   - named, when not "", is the reference of every target (the
//     experiment's comparison.reference);
//   - else the baseline with the lowest inner-validation loss on the
//     target, where innerLoss holds, per model, one loss per target (the
//     mean over its units of the mean squared error of standardized scores
//     on each training fold's inner validation part, fitted on the rest of
//     the training fold; NaN where undefined);
//   - else, when no baseline has a defined loss, the first of baselines,
//     which lists the baselines in the experiment's order.
//
// A target gets no reference when there is no baseline.
func ChooseReference(targets, baselines []string, named string, innerLoss map[string][]float64) (map[string]string, string) {
	ref := make(map[string]string, len(targets))
	switch {
	case named != "":
		for _, t := range targets {
			ref[t] = named
		}
		return ref, fmt.Sprintf("the reference baseline %s is named in the experiment (comparison.reference)", named)
	case len(baselines) == 0:
		return ref, ""
	case len(baselines) == 1:
		for _, t := range targets {
			ref[t] = baselines[0]
		}
		return ref, fmt.Sprintf("the reference baseline is %s, the only baseline", baselines[0])
	}
	chosen := false
	for ti, t := range targets {
		best, bestLoss := baselines[0], math.NaN()
		for _, b := range baselines {
			if loss := innerLoss[b]; ti < len(loss) && !math.IsNaN(loss[ti]) && (math.IsNaN(bestLoss) || loss[ti] < bestLoss) {
				best, bestLoss = b, loss[ti]
			}
		}
		chosen = chosen || !math.IsNaN(bestLoss)
		ref[t] = best
	}
	if !chosen {
		return ref, fmt.Sprintf("the reference baseline is %s, the first baseline of the experiment (there was no inner "+
			"validation to choose on; name one with comparison.reference)", baselines[0])
	}
	return ref, "the reference baseline of each target is the baseline with the lowest inner-validation error " +
		"(mean squared error of standardized scores on each training fold's inner validation part, fitted on the rest " +
		"of the training fold): the test folds played no part in the choice"
}

// foldTTest compares g with ref on m over the folds that are not repeated.
func foldTTest(g, ref *Group, m Metric, repeated map[[2]int]bool, opt CompareOptions) (TTest, error) {
	diff, err := FoldDifferences(g, ref, m)
	if err != nil {
		return TTest{}, err
	}
	distinct := diff[:0]
	for i, f := range g.Folds {
		if !repeated[[2]int{f.Repeat, f.Fold}] {
			distinct = append(distinct, diff[i])
		}
	}
	return CorrectedTTest(distinct, opt.NTrain, opt.NTest), nil
}

// DuplicateFolds returns the folds of rows, as (repeat, fold) from 0, whose
// test participants are exactly those of an earlier fold (in order of
// repeat, then fold). A repeat of k-fold cross-validation that deals the
// same groups to the same folds again (as it must when there are as many
// groups as folds) adds no information, and counting its folds as new
// would shrink the corrected t-test's variance. Rows without participant
// ids are never duplicates.
func DuplicateFolds(rows []Prediction) map[[2]int]bool {
	members := make(map[[2]int][]string)
	for _, p := range rows {
		if p.ParticipantID == "" {
			return nil
		}
		k := [2]int{p.Repeat, p.Fold}
		members[k] = append(members[k], p.ParticipantID)
	}
	keys := make([][2]int, 0, len(members))
	for k, ids := range members {
		keys = append(keys, k)
		slices.Sort(ids)
	}
	slices.SortFunc(keys, func(a, b [2]int) int {
		if a[0] != b[0] {
			return a[0] - b[0]
		}
		return a[1] - b[1]
	})
	seen := make(map[string]bool)
	var dup map[[2]int]bool
	for _, k := range keys {
		set := strings.Join(slices.Compact(members[k]), "\x00")
		if seen[set] {
			if dup == nil {
				dup = make(map[[2]int]bool)
			}
			dup[k] = true
		}
		seen[set] = true
	}
	return dup
}

// WriteComparisonMarkdown writes the comparison table: per target, every
// model with Pearson r and MAE (mean ± SD over folds), their pooled 95%
// bootstrap intervals, permutation p-values, and the difference from the
// reference baseline with the corrected resampled t-test. referenceRule
// says how the reference was chosen (ChooseReference).
func WriteComparisonMarkdown(w io.Writer, comps []Comparison, referenceRule string) error {
	var b strings.Builder
	var targets []string
	for _, c := range comps {
		if !slices.Contains(targets, c.Target) {
			targets = append(targets, c.Target)
		}
	}
	for _, target := range targets {
		fmt.Fprintf(&b, "\n### %s: comparison\n\n", EscapeMarkdown(target))
		b.WriteString("| model | r within folds | CI of r | p (r) | MAE | CI of MAE | p (MAE) | Δr vs reference (t-test p) | ΔMAE (t-test p) |\n")
		b.WriteString("| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |\n")
		for _, c := range comps {
			if c.Target == target {
				writeComparisonRow(&b, c)
			}
		}
	}
	if len(comps) > 0 {
		fmt.Fprintf(&b, "\nr within folds and MAE: mean ± SD over test folds [pooled]. The headline figure is r within "+
			"folds: Pearson's r of all test predictions after centring each test fold's scores and predictions on their "+
			"own means. Plain pooled r (in the metrics table) also correlates the folds' training means with their test "+
			"scores, which are anti-correlated, and so is biased downwards, below 0 for a model that knows nothing. "+
			"CI: %.0f%% percentile bootstrap"+
			" over participants (%d resamples). p: permutation p-value, (1 + #{null at least as good}) / (1 + permutations). "+
			"Δ: mean difference from the reference baseline over the same folds, tested by the "+
			"corrected resampled t-test (Nadeau & Bengio 2003); %s.\n", 100*comps[0].R.Level, comps[0].R.Resamples, EscapeMarkdown(referenceRule))
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func writeComparisonRow(b *strings.Builder, c Comparison) {
	b.WriteString("| " + strings.Join(comparisonCells(c, EscapeMarkdown), " | ") + " |\n")
}

// comparisonCells returns the cells of c's row of the comparison table,
// names passed through esc.
func comparisonCells(c Comparison, esc func(string) string) []string {
	name := esc(c.Model)
	if c.Baseline {
		name += " (baseline)"
	}
	pr, pm := "–", "–"
	if c.P != nil {
		pr, pm = formatP(c.P.PearsonWithin), formatP(c.P.MAE)
	}
	vsR, vsMAE := "–", "–"
	if c.Reference != "" {
		vsR = fmt.Sprintf("%s vs %s (p %s)", formatDiff(c.DiffR.MeanDiff), esc(c.Reference), formatP(c.DiffR.P))
		vsMAE = fmt.Sprintf("%s (p %s)", formatDiff(c.DiffMAE.MeanDiff), formatP(c.DiffMAE.P))
	} else if c.IsReference {
		vsR = "reference"
	}
	return []string{name,
		c.Group.cell(MetricPearsonWithin), fmt.Sprintf("[%s, %s]", formatNumber(c.R.Lower), formatNumber(c.R.Upper)), pr,
		c.Group.cell(MetricMAE), fmt.Sprintf("[%s, %s]", formatNumber(c.MAE.Lower), formatNumber(c.MAE.Upper)), pm,
		vsR, vsMAE}
}

// WriteComparisonText writes the comparison of WriteComparisonMarkdown
// as plain text for a terminal: per target, tables at most TextWidth
// characters wide (split into parts that repeat the model), and a short
// note saying how to read them.
func WriteComparisonText(w io.Writer, comps []Comparison, referenceRule string) error {
	var b strings.Builder
	var targets []string
	for _, c := range comps {
		if !slices.Contains(targets, c.Target) {
			targets = append(targets, c.Target)
		}
	}
	header := []string{"model", "r within folds", "CI of r", "p (r)", "MAE", "CI of MAE", "p (MAE)", "Δr vs reference", "ΔMAE"}
	for _, target := range targets {
		fmt.Fprintf(&b, "\n%s: comparison\n\n", target)
		var rows [][]string
		for _, c := range comps {
			if c.Target == target {
				rows = append(rows, comparisonCells(c, func(s string) string { return s }))
			}
		}
		writeTextTable(&b, header, rows, 1, TextWidth)
	}
	if len(comps) > 0 {
		b.WriteString("\n" + WrapText(fmt.Sprintf("r within folds and MAE: mean ± SD over test folds [pooled]. CI: %.0f%% "+
			"percentile bootstrap over participants. p: permutation p-value. Δ: mean difference from the reference baseline "+
			"over the same folds, corrected resampled t-test p (Nadeau & Bengio 2003); %s.",
			100*comps[0].R.Level, referenceRule), TextWidth))
	}
	_, err := io.WriteString(w, b.String())
	return err
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
