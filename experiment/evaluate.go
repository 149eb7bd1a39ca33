package experiment

import (
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/train"
)

// A Report is everything skein concludes from a finished run.
type Report struct {
	Experiment *Experiment
	Result     *train.Result
	Rows       []eval.Prediction
	// ClassRows are the class predictions of the models fitted to the
	// cohort's labels (train.Result.ClassPredictions); Classes names each
	// label's classes.
	ClassRows []eval.ClassPrediction
	Classes   map[string][]string
	// LabelRule says how the reference baseline of the class labels was
	// chosen (eval.ChooseLabelReference); "" without labels.
	LabelRule   string
	Summary     *eval.Summary
	Nulls       []eval.NullDistribution // nil without a permutation test
	Comparisons []eval.Comparison
	// ReferenceRule says how the reference baseline of the comparisons
	// was chosen (ChooseReference).
	ReferenceRule string
	// Cautions are the statistical cautions this run triggered, each a
	// sentence for the summary and the report.
	Cautions []string
	// Participants counts the cohort's participants.
	Participants int
	// Excluded lists the participants left out of the cohort, each with
	// its reason (data.Cohort.Excluded).
	Excluded []data.Exclusion
	// Grouped says whether the cohort has a grouping column.
	Grouped bool
	// SampleSize is the sample-size curve; nil unless the experiment asks
	// for one ([sample_size]).
	SampleSize []eval.SampleSizeRow
}

// Evaluate scores the run of exp that r produced as res: metrics per model
// and target, the permutation test and the sample-size curve when the
// experiment asks for them (both retrain models, so they take time), the
// comparison with the reference baseline and the cautions the run
// triggered. bins ≤ 0 means eval.DefaultBins.
func Evaluate(ctx context.Context, exp *Experiment, r *train.Runner, res *train.Result, bins int) (*Report, error) {
	return EvaluateWith(ctx, exp, r, res, bins, Computed{})
}

// Computed holds the parts of an evaluation that batch units computed
// (Merge); EvaluateWith computes the others as Evaluate does.
type Computed struct {
	// Nulls, when set, gives the permutation test's null distributions
	// from the observed summary (eval.AssembleNulls of the units' scores).
	Nulls func(observed *eval.Summary) ([]eval.NullDistribution, error)
	// SampleSize, when not nil, is the sample-size curve.
	SampleSize []eval.SampleSizeRow
	// ClassNulls are the permutation test's null AUC within folds of the class labels
	// (eval.ScoreClassNull of the units' runs); read when Nulls is set.
	ClassNulls []eval.ClassNull
}

// EvaluateWith is Evaluate for a run some of whose parts were computed
// elsewhere, in batch units; the report equals Evaluate's for the same
// run.
func EvaluateWith(ctx context.Context, exp *Experiment, r *train.Runner, res *train.Result, bins int, done Computed) (*Report, error) {
	rep := &Report{Experiment: exp, Result: res, Participants: len(r.Cohort.Participants), Excluded: r.Cohort.Excluded,
		Grouped: train.Groups(r.Cohort) != nil}
	rep.Rows = res.Predictions
	rep.Summary = eval.Summarize(rep.Rows, bins, true)
	if siteOf := participantSites(r.Cohort); siteOf != nil {
		rep.Summary.AddSites(rep.Rows, siteOf)
	}
	orderGroups(rep.Summary, exp, r.Cohort.Targets)
	rep.ClassRows = res.ClassPredictions
	if len(r.Cohort.Labels) > 0 {
		rep.Classes = make(map[string][]string, len(r.Cohort.Labels))
		for l, label := range r.Cohort.Labels {
			rep.Classes[label] = r.Cohort.Classes[l]
		}
		rep.Summary.Labels = eval.SummarizeClasses(rep.ClassRows, rep.Classes, *exp.CV.Threshold)
	}
	if exp.Permutation.Count > 0 {
		nulls, classNulls := done.Nulls, done.ClassNulls
		if nulls == nil {
			nulls = func(observed *eval.Summary) ([]eval.NullDistribution, error) {
				scores, classes, err := permutationTest(ctx, r, exp.Permutation, observed)
				classNulls = classes
				return scores, err
			}
		}
		var err error
		if rep.Nulls, err = nulls(rep.Summary); err != nil {
			return nil, fmt.Errorf("permutation test: %w", err)
		}
		if err := eval.AssembleClassNulls(rep.Summary.Labels, classNulls, exp.Permutation.Count); err != nil {
			return nil, fmt.Errorf("permutation test: %w", err)
		}
	}
	rep.SampleSize = done.SampleSize
	if len(exp.SampleSize.Fractions) > 0 && rep.SampleSize == nil {
		runs, err := r.RunSampleSizes(ctx, exp.SampleSize.Fractions, exp.SampleSize.Models)
		if err != nil {
			return nil, fmt.Errorf("sample-size curve: %w", err)
		}
		rep.SampleSize = SampleSizeCurve(runs)
	}
	isBaseline := make(map[string]bool)
	var baselines []string
	for _, m := range exp.Models {
		k, err := m.Spec()
		if err != nil {
			return nil, fmt.Errorf("model %q: %w", m.Name, err)
		}
		if k.Baseline {
			isBaseline[m.Name] = true
		}
		if k.Baseline && k.New != nil { // a reference of the scores learns them
			baselines = append(baselines, m.Name)
		}
	}
	named := exp.Comparison.Reference
	if !slices.Contains(baselines, named) {
		named = "" // it learns class labels only: the scores choose their own
	}
	reference, rule := eval.ChooseReference(r.Cohort.Targets, baselines, named, meanInnerLoss(exp, res, len(r.Cohort.Targets)))
	rep.ReferenceRule = rule
	var nTrain, nTest float64
	for _, s := range res.Splits {
		nTrain += float64(len(s.Train))
		nTest += float64(len(s.Test))
	}
	nTrain /= float64(len(res.Splits))
	nTest /= float64(len(res.Splits))
	comps, err := eval.Compare(rep.Summary, rep.Rows, eval.CompareOptions{
		Baselines: isBaseline, Reference: reference, NTrain: nTrain, NTest: nTest, Nulls: rep.Nulls, Seed: uint64(exp.Seed),
	})
	if err != nil {
		return nil, err
	}
	rep.Comparisons = comps
	if len(rep.Summary.Labels) > 0 {
		var classifiers []string
		for _, m := range exp.Models {
			if k, _ := m.Spec(); k.Baseline && k.NewClassifier != nil {
				classifiers = append(classifiers, m.Name)
			}
		}
		var refs map[string]string
		refs, rep.LabelRule = eval.ChooseLabelReference(r.Cohort.Labels, classifiers, labelReference(exp, classifiers),
			meanLabelLoss(exp, res, len(r.Cohort.Labels)))
		eval.CompareClasses(rep.Summary.Labels, rep.ClassRows, eval.CompareClassOptions{
			Reference: refs, NTrain: nTrain, NTest: nTest, Seed: uint64(exp.Seed),
		})
	}
	rep.Cautions = runCautions(rep, r)
	return rep, nil
}

// meanInnerLoss returns, per model, the mean over its units of the
// inner-validation loss of each target (NaN where no unit has one).
func meanInnerLoss(exp *Experiment, res *train.Result, targets int) map[string][]float64 {
	sums := make(map[string][]float64)
	counts := make(map[string][]int)
	for u, losses := range res.InnerLoss {
		name := exp.Models[u.Model].Name
		if sums[name] == nil {
			sums[name], counts[name] = make([]float64, targets), make([]int, targets)
		}
		for t, v := range losses {
			if !math.IsNaN(v) {
				sums[name][t] += v
				counts[name][t]++
			}
		}
	}
	for name, s := range sums {
		for t := range s {
			s[t] /= float64(counts[name][t]) // 0/0 is NaN: no unit had a loss
		}
	}
	return sums
}

// labelReference returns the reference baseline the experiment names for
// its class labels: comparison.reference when that model learns labels,
// else "" (choose one).
func labelReference(exp *Experiment, classifiers []string) string {
	if slices.Contains(classifiers, exp.Comparison.Reference) {
		return exp.Comparison.Reference
	}
	return ""
}

// meanLabelLoss returns, per model, the mean over its units of the
// inner-validation log loss of each label (NaN where no unit has one).
func meanLabelLoss(exp *Experiment, res *train.Result, labels int) map[string][]float64 {
	sums := make(map[string][]float64)
	counts := make(map[string][]int)
	for u, losses := range res.LabelLoss {
		name := exp.Models[u.Model].Name
		if sums[name] == nil {
			sums[name], counts[name] = make([]float64, labels), make([]int, labels)
		}
		for l, v := range losses {
			if !math.IsNaN(v) {
				sums[name][l] += v
				counts[name][l]++
			}
		}
	}
	for name, s := range sums {
		for l := range s {
			s[l] /= float64(counts[name][l])
		}
	}
	return sums
}

// blocksSentence says how a permutation exchanges the rows of grouped
// participants.
func blocksSentence(blocks train.Blocks) string {
	switch blocks {
	case train.BlocksWithin:
		return "rows shuffled within each group"
	case train.BlocksWhole:
		return "groups exchanged whole among groups of the same size"
	}
	return fmt.Sprintf("blocks = \"auto\": groups of at most %d, such as families, exchanged whole among groups of the "+
		"same size and shuffled within; larger groups, such as sites, shuffled within only", train.AutoWholeMax)
}

// gridEdgeCautions returns one caution per model, target and setting whose
// grid choice fell on an edge of its grid in some fold.
func gridEdgeCautions(exp *Experiment, res *train.Result, targets []string) []string {
	type key struct {
		model, target int
		setting       string
	}
	type count struct {
		low, high, folds int
		min, max         float64
	}
	counts := make(map[key]*count)
	var keys []key
	for _, u := range res.Units {
		for t, choices := range res.Choices[u] {
			for _, c := range choices {
				k := key{u.Model, t, c.Setting}
				n := counts[k]
				if n == nil {
					n = &count{min: c.Min, max: c.Max}
					counts[k] = n
					keys = append(keys, k)
				}
				n.folds++
				if c.AtEdge() && c.Value == c.Min {
					n.low++
				} else if c.AtEdge() {
					n.high++
				}
			}
		}
	}
	var out []string
	for _, k := range keys {
		n := counts[k]
		if n.low+n.high == 0 {
			continue
		}
		var where []string
		if n.high > 0 {
			where = append(where, fmt.Sprintf("the largest %s value (%g) in %d", k.setting, n.max, n.high))
		}
		if n.low > 0 {
			where = append(where, fmt.Sprintf("the smallest %s value (%g) in %d", k.setting, n.min, n.low))
		}
		text := fmt.Sprintf("Grid edge: for %s, %s chose %s of %d folds, so the best value may lie beyond the grid; "+
			"widen %s in [model.%s].", targets[k.target], exp.Models[k.model].Name, strings.Join(where, " and "),
			n.folds, k.setting, exp.Models[k.model].Kind())
		if n.high > 0 {
			text += " A penalty at the top of its grid makes predictions close to constant."
		}
		out = append(out, text)
	}
	return out
}

// pooledBiasShown is the gap between pooled r and r within folds, or
// between pooled AUC and AUC within folds, from which the summary cautions
// that the two differ (common practice, no source).
const pooledBiasShown = 0.05

// predictionCautions names the models whose pooled predictions are
// constant to rounding, and the largest gap between pooled r and the
// headline r within folds, and between a class label's pooled AUC and
// the headline AUC within folds, when it is large enough to mislead.
func predictionCautions(sum *eval.Summary, rows []eval.Prediction) []string {
	byGroup := make(map[[2]string][2][]float64)
	for _, p := range rows {
		k := [2]string{p.Model, p.Target}
		v := byGroup[k]
		v[0], v[1] = append(v[0], p.Observed), append(v[1], p.Predicted)
		byGroup[k] = v
	}
	var constant []string
	worst, gap := "", 0.0
	for _, g := range sum.Groups {
		v := byGroup[[2]string{g.Model, g.Target}]
		if obs, pred, _ := eval.CompletePairs(v[0], v[1]); len(obs) > 0 && eval.ConstantPredictions(obs, pred) {
			constant = append(constant, fmt.Sprintf("%s on %s", g.Model, g.Target))
			continue
		}
		if d := math.Abs(g.Pooled.Pearson - g.Pooled.PearsonWithin); d > gap {
			worst, gap = fmt.Sprintf("%s on %s (pooled r %.3f, r within folds %.3f)", g.Model, g.Target,
				g.Pooled.Pearson, g.Pooled.PearsonWithin), d
		}
	}
	var out []string
	if len(constant) > 0 {
		out = append(out, fmt.Sprintf("Constant predictions: %s predicted the same value, to rounding, for "+
			"everyone (as the mean predictor does once confounds are regressed out). Their r, ρ, intervals and "+
			"p-values of r are undefined and shown as –; their errors are the chance level.", strings.Join(constant, ", ")))
	}
	if gap > pooledBiasShown {
		out = append(out, fmt.Sprintf("Pooled r differs from r within folds by up to %.3f: %s. Pooled r mixes in "+
			"the folds' training means, which run against their test scores, so it is biased downwards; the "+
			"headline figure is r within folds.", gap, worst))
	}
	worst, gap = "", 0.0
	for _, g := range sum.Labels {
		if d := math.Abs(g.Pooled.AUC - g.Pooled.AUCWithin); d > gap {
			worst, gap = fmt.Sprintf("%s on %s (pooled AUC %.3f, AUC within folds %.3f)", g.Model, g.Label,
				g.Pooled.AUC, g.Pooled.AUCWithin), d
		}
	}
	if gap > pooledBiasShown {
		out = append(out, fmt.Sprintf("Pooled AUC differs from AUC within folds by up to %.3f: %s. Pooled AUC ranks "+
			"participants of different folds against each other, whose probabilities carry their training folds' "+
			"class frequencies, which run against their test folds', so it is biased downwards; the headline figure "+
			"is AUC within folds.", gap, worst))
	}
	return out
}

// smallFold is the test-fold size below which fold-level figures are too
// noisy to read alone (common practice, no source: the SD of r over n
// pairs is about 1/√n, 0.22 at n = 20).
const smallFold = 20

// runCautions returns the cautions the run of r triggered, in a fixed
// order.
func runCautions(rep *Report, r *train.Runner) []string {
	var out []string
	splits := rep.Result.Splits
	smallest := -1
	seen := make(map[string]bool)
	repeated := 0
	for _, s := range splits {
		if smallest < 0 || len(s.Test) < smallest {
			smallest = len(s.Test)
		}
		key := fmt.Sprint(s.Test)
		if seen[key] {
			repeated++
		}
		seen[key] = true
	}
	if smallest >= 0 && smallest < smallFold {
		out = append(out, fmt.Sprintf("Small test folds: the smallest holds %d participants. A fold's r over n "+
			"participants has an SD of about 1/√n (%.2f here), so single folds say little; read the pooled figures "+
			"and their intervals.", smallest, 1/math.Sqrt(float64(smallest))))
	}
	if repeated > 0 {
		out = append(out, fmt.Sprintf("Repeated splits: %d of %d folds have exactly the test participants of an "+
			"earlier fold (repeats re-deal the same groups when there are few), so they add no information. The "+
			"corrected t-tests count each distinct fold once.", repeated, len(splits)))
	}
	if groups := train.Groups(r.Cohort); groups != nil {
		distinct := len(data.GroupIndices(groups))
		if k := *rep.Experiment.CV.Folds; distinct < 4*k {
			out = append(out, fmt.Sprintf("Few groups: the %d participants fall in %d groups of the grouping column "+
				"for %d folds. Whole groups move between folds and permutations, so fold sizes vary and fewer "+
				"distinct splits and permutations exist.", len(r.Cohort.Participants), distinct, k))
		}
	}
	out = append(out, siteCautions(r.Cohort)...)
	out = append(out, data.LabelCautions(r.Cohort)...)
	out = append(out, gridEdgeCautions(rep.Experiment, rep.Result, r.Cohort.Targets)...)
	out = append(out, predictionCautions(rep.Summary, rep.Rows)...)
	if count := rep.Experiment.Permutation.Count; count > 0 && count < 99 {
		out = append(out, fmt.Sprintf("Few permutations: with %d permutations the smallest possible p-value is "+
			"1/%d = %.3f.", count, count+1, 1/float64(count+1)))
	}
	return out
}

// Write writes predictions.csv, class_predictions.csv (with class
// labels), metrics.json, comparison.csv, summary.md and, after a
// permutation test, permutations.csv (the scores' null distributions and
// the labels' null AUC, eval.WriteNullCSV) and, with a sample-size curve,
// sample_size.csv into the work folder of d; they
// appear in the run folder when d is committed.
func (rep *Report) Write(d *RunDir) error {
	classNulls := eval.ClassNulls(rep.Summary.Labels)
	files := []struct {
		name  string
		write func(io.Writer) error
		skip  bool
	}{
		{PredictionsFile, func(w io.Writer) error { return eval.WritePredictions(w, rep.Rows) }, false},
		{ClassPredictionsFile, func(w io.Writer) error { return eval.WriteClassPredictions(w, rep.ClassRows, rep.Classes) }, len(rep.ClassRows) == 0},
		{MetricsFile, rep.Summary.WriteJSON, false},
		{ComparisonFile, func(w io.Writer) error { return eval.WriteComparisonCSV(w, rep.Comparisons) }, false},
		{LearningFile, func(w io.Writer) error { return writeLearningCSV(w, rep.Experiment, rep.Result) }, len(rep.Result.Histories) == 0},
		{PermutationFile, func(w io.Writer) error { return eval.WriteNullCSV(w, rep.Nulls, classNulls) }, rep.Nulls == nil && classNulls == nil},
		{SampleSizeFile, func(w io.Writer) error { return eval.WriteSampleSizeCSV(w, rep.SampleSize) }, rep.SampleSize == nil},
		{SummaryFile, rep.WriteMarkdown, false},
	}
	for _, f := range files {
		if f.skip {
			continue
		}
		if err := d.WriteWith(f.name, f.write); err != nil {
			return err
		}
	}
	return nil
}

// WriteMarkdown writes summary.md: the answer (AnswerRun), the run in one
// paragraph, the metrics tables, the comparison tables and the cautions.
func (rep *Report) WriteMarkdown(w io.Writer) error {
	var buf bytes.Buffer
	exp := rep.Experiment
	fmt.Fprintf(&buf, "# skein run summary\n\n%s\n\n", eval.EscapeMarkdown(AnswerRun(exp, rep.Comparisons, rep.Summary.Labels)))
	buf.WriteString(rep.overview(eval.EscapeMarkdown) + "\n\n## Metrics\n\n")
	if err := rep.Summary.WriteMarkdown(&buf); err != nil {
		return err
	}
	if rep.LabelRule != "" {
		fmt.Fprintf(&buf, "\nClass labels: %s.\n", eval.EscapeMarkdown(rep.LabelRule))
	}
	buf.WriteString("\n## Comparison\n")
	if err := eval.WriteComparisonMarkdown(&buf, rep.Comparisons, rep.ReferenceRule); err != nil {
		return err
	}
	if len(rep.Excluded) > 0 {
		buf.WriteString("\n## Excluded participants\n\n")
		for _, x := range rep.Excluded {
			fmt.Fprintf(&buf, "- %s: %s\n", eval.EscapeMarkdown(x.ID), eval.EscapeMarkdown(x.Reason))
		}
	}
	if len(rep.Cautions) > 0 {
		buf.WriteString("\n## Cautions for this run\n\n")
		for _, c := range rep.Cautions {
			buf.WriteString("- " + eval.EscapeMarkdown(c) + "\n")
		}
	}
	_, err := w.Write(buf.Bytes())
	return err
}

// overview is the run in one sentence, names passed through esc.
func (rep *Report) overview(esc func(string) string) string {
	var b strings.Builder
	exp := rep.Experiment
	fmt.Fprintf(&b, "%d participants (%d excluded), %d models, %d-fold cross-validation × %d repeats, seed %d",
		rep.Participants, len(rep.Excluded), len(exp.Models), *exp.CV.Folds, *exp.CV.Repeats, exp.Seed)
	if len(exp.CV.Confounds) > 0 {
		fmt.Fprintf(&b, ", confounds %s regressed out of the scores within each training fold", esc(strings.Join(exp.CV.Confounds, ", ")))
		if len(rep.Classes) > 0 {
			b.WriteString(" (not out of the class labels)")
		}
	}
	if rep.Nulls != nil {
		what := "scores and covariates"
		if len(rep.Classes) > 0 {
			what = "scores, class labels and covariates"
		}
		fmt.Fprintf(&b, ", %d permutations of the participants table (%s together) against the connectomes", exp.Permutation.Count, what)
		if rep.Grouped {
			fmt.Fprintf(&b, " (%s)", blocksSentence(exp.Permutation.Blocks))
		}
	}
	return b.String() + "."
}

// WriteText writes what WriteMarkdown does as plain text for a terminal,
// no line wider than eval.TextWidth: the overview, the metrics tables
// (eval.Summary.WriteText), the comparison (eval.WriteComparisonText),
// the excluded participants and the cautions.
func (rep *Report) WriteText(w io.Writer) error {
	var buf bytes.Buffer
	same := func(s string) string { return s }
	buf.WriteString(eval.WrapText(rep.overview(same), eval.TextWidth) + "\n")
	if err := rep.Summary.WriteText(&buf); err != nil {
		return err
	}
	if err := eval.WriteComparisonText(&buf, rep.Comparisons, rep.ReferenceRule); err != nil {
		return err
	}
	if len(rep.Excluded) > 0 {
		buf.WriteString("\nExcluded participants:\n")
		for _, x := range rep.Excluded {
			buf.WriteString(eval.WrapText("- "+x.ID+": "+x.Reason, eval.TextWidth))
		}
	}
	if len(rep.Cautions) > 0 {
		buf.WriteString("\nCautions for this run:\n")
		for _, c := range rep.Cautions {
			buf.WriteString(eval.WrapText("- "+c, eval.TextWidth))
		}
	}
	_, err := w.Write(buf.Bytes())
	return err
}

// writeLearningCSV writes the learning curves of res as LearningFile.
func writeLearningCSV(out io.Writer, exp *Experiment, res *train.Result) error {
	w := csv.NewWriter(out)
	w.Write([]string{"model", "repeat", "fold", "member", "epoch", "train_loss", "valid_loss", "best"})
	best := map[bool]string{false: "0", true: "1"}
	for _, u := range res.Units {
		for _, e := range res.Histories[u] {
			valid := ""
			if !math.IsNaN(e.ValidLoss) {
				valid = strconv.FormatFloat(e.ValidLoss, 'g', -1, 64)
			}
			w.Write([]string{exp.Models[u.Model].Name, strconv.Itoa(u.Repeat + 1), strconv.Itoa(u.Fold + 1), strconv.Itoa(e.Member), strconv.Itoa(e.Epoch),
				strconv.FormatFloat(e.TrainLoss, 'g', -1, 64), valid, best[e.Best]})
		}
	}
	w.Flush()
	return w.Error()
}

// orderGroups puts the summary's groups in the order of the experiment's
// models, then of the cohort's targets, the order a reader expects.
func orderGroups(sum *eval.Summary, exp *Experiment, targets []string) {
	rank := func(g eval.Group) (int, int) {
		m := slices.IndexFunc(exp.Models, func(c train.ModelConfig) bool { return c.Name == g.Model })
		return m, slices.Index(targets, g.Target)
	}
	slices.SortStableFunc(sum.Groups, func(a, b eval.Group) int {
		am, at := rank(a)
		bm, bt := rank(b)
		if am != bm {
			return am - bm
		}
		return at - bt
	})
}

// participantSites maps each participant_id of c to its site (cohort.site);
// nil when the cohort has no sites.
func participantSites(c *data.Cohort) map[string]string {
	if len(c.Participants) == 0 || c.Participants[0].Site == "" {
		return nil
	}
	out := make(map[string]string, len(c.Participants))
	for _, p := range c.Participants {
		out[p.ID] = p.Site
	}
	return out
}

// SiteScoreEta2 is the η² of a one-way analysis of variance of a score on
// site from which the summary cautions that the sites alone predict the
// score: 0.06, Cohen's (1988, section 8.2) "medium" effect (from memory).
const SiteScoreEta2 = 0.06

// siteCautions returns one caution per target whose scores the sites of
// c explain with η² ≥ SiteScoreEta2 (eval.EtaSquared): connectomes carry
// the site too, so a model can predict such a score from the site alone.
func siteCautions(c *data.Cohort) []string {
	sites := participantSites(c)
	if sites == nil {
		return nil
	}
	labels := make([]string, len(c.Participants))
	for i, p := range c.Participants {
		labels[i] = p.Site
	}
	var out []string
	for t, target := range c.Targets {
		y := make([]float64, len(c.Participants))
		for i, p := range c.Participants {
			y[i] = p.Scores[t]
		}
		if eta := eval.EtaSquared(y, labels); eta >= SiteScoreEta2 {
			out = append(out, fmt.Sprintf("Site and score: the sites explain %.0f%% of the variance of %s (η² of a one-way "+
				"ANOVA = %.2f, at or above %.2f). Connectomes carry the site too, so a model can predict %s through the "+
				"site alone: harmonise the edges in the folds ([cv.harmonize]), regress the site out of the scores "+
				"(cv.site_confound = true), or validate across sites (cv.sites_out), and read the per-site r.",
				100*eta, target, eta, SiteScoreEta2, target))
		}
	}
	return out
}
