package experiment

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"github.com/skein-neuro/skein/eval"
)

// AnswerLevel is the p-value below which Answer calls a difference from
// the reference baseline significant (common practice, no source).
const AnswerLevel = 0.05

// Fusion returns the names of the models of exp that learn from both the
// functional and the structural connectome (train.ModelConfig.Inputs):
// the models that fuse structure with function, in the experiment's order.
func Fusion(exp *Experiment) []string {
	var out []string
	for _, m := range exp.Models {
		if f, s := m.Inputs(); f && s {
			out = append(out, m.Name)
		}
	}
	return out
}

// Answer returns one sentence that answers the question skein is run to
// ask: did fusing structure with function beat the reference baseline, by
// how much, and by which test. It reads the comparisons of a run (Compare,
// or ReadComparisonCSV of its comparison.csv) of every model of exp that
// fuses structure with function (Fusion) with the reference baseline of
// its score: a comparison beats the reference when the mean difference in
// fold r is positive and its corrected resampled t-test has p <
// AnswerLevel, does worse when the difference is negative with p <
// AnswerLevel, and otherwise does not differ significantly. When there is
// no such model, or no reference baseline to compare it with, the sentence
// says so. With several comparisons, it says that their p-values are not
// corrected for their number.
func Answer(exp *Experiment, comps []eval.Comparison) string {
	fusion := Fusion(exp)
	if len(fusion) == 0 {
		return "No model of this experiment learns from both the functional and the structural connectome, " +
			"so this run cannot say whether fusing structure with function beats the reference baseline."
	}
	isFusion := make(map[string]bool)
	for _, name := range fusion {
		isFusion[name] = true
	}
	refR := make(map[[2]string]float64)
	for _, c := range comps {
		refR[[2]string{c.Model, c.Target}] = c.R.Estimate
	}
	var beat, worse, same []eval.Comparison
	var fusedRefs, fusedRefTargets []string // reference baselines that fuse structure with function themselves, and their scores
	for _, c := range comps {
		if c.IsReference && isFusion[c.Model] {
			fusedRefs = append(fusedRefs, c.Model)
			fusedRefTargets = append(fusedRefTargets, c.Target)
		}
		if !isFusion[c.Model] || c.Reference == "" {
			continue
		}
		switch d := c.DiffR; {
		case d.P < AnswerLevel && d.MeanDiff > 0:
			beat = append(beat, c)
		case d.P < AnswerLevel && d.MeanDiff < 0:
			worse = append(worse, c)
		default:
			same = append(same, c)
		}
	}
	test := fmt.Sprintf("the mean difference in fold r from the reference, tested by the corrected resampled t-test at p < %g", AnswerLevel)
	n := len(beat) + len(worse) + len(same)
	if n == 0 && len(fusedRefs) > 0 {
		return fmt.Sprintf("The reference baseline %s itself learns from both connectomes and no other model that does "+
			"was compared with it, so this run cannot say whether fusing structure with function beats a baseline; "+
			"name another baseline with comparison.reference.", listNames(slices.Compact(fusedRefs)))
	}
	if n == 0 {
		return fmt.Sprintf("This experiment has no reference baseline to compare %s with, so this run cannot say "+
			"whether fusing structure with function beats one.", listNames(fusion))
	}
	note := ""
	switch len(fusedRefs) {
	case 0:
	case 1:
		note = fmt.Sprintf("; %s, the reference baseline on %s, itself learns from both connectomes", fusedRefs[0], fusedRefTargets[0])
	default:
		refs := make([]string, len(fusedRefs))
		for i := range fusedRefs {
			refs[i] = fmt.Sprintf("%s (on %s)", fusedRefs[i], fusedRefTargets[i])
		}
		note = fmt.Sprintf("; the reference baselines %s themselves learn from both connectomes", listNames(refs))
	}
	item := func(c eval.Comparison) string {
		ref, ok := refR[[2]string{c.Reference, c.Target}]
		if !ok {
			ref = math.NaN()
		}
		return fmt.Sprintf("%s on %s, r within folds %s against %s for %s, Δr %s, p %s", c.Model, c.Target,
			answerNumber(c.R.Estimate), answerNumber(ref), c.Reference, answerDiff(c.DiffR.MeanDiff), answerP(c.DiffR.P))
	}
	items := func(cs []eval.Comparison) string {
		parts := make([]string, len(cs))
		for i, c := range cs {
			parts[i] = item(c)
		}
		return strings.Join(parts, "; ")
	}
	if n == 1 {
		var c eval.Comparison
		verdict := "did not beat the reference baseline"
		switch {
		case len(beat) == 1:
			c, verdict = beat[0], "beat the reference baseline"
		case len(worse) == 1:
			c, verdict = worse[0], "did not beat the reference baseline; it did worse"
		default:
			c = same[0]
			verdict += " (the difference is not significant)"
		}
		return fmt.Sprintf("Fusing structure with function %s: %s (Δr is %s%s).", verdict, item(c), test, note)
	}
	var b strings.Builder
	if len(beat) > 0 {
		fmt.Fprintf(&b, "Fusing structure with function beat the reference baseline in %d of %d comparisons (%s)", len(beat), n, items(beat))
	} else {
		fmt.Fprintf(&b, "Fusing structure with function did not beat the reference baseline in any of %d comparisons", n)
	}
	var rest []string
	if len(worse) > 0 {
		rest = append(rest, fmt.Sprintf("did worse in %d (%s)", len(worse), items(worse)))
	}
	if len(same) > 0 {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, c := range same {
			if d := c.DiffR.MeanDiff; !math.IsNaN(d) {
				lo, hi = min(lo, d), max(hi, d)
			}
		}
		span := ""
		if lo == hi {
			span = ", Δr " + answerDiff(lo)
		} else if !math.IsInf(lo, 0) {
			span = fmt.Sprintf(", Δr from %s to %s", answerDiff(lo), answerDiff(hi))
		}
		which := "the other " + countWord(len(same))
		if len(beat) == 0 && len(worse) == 0 {
			which = "all " + countWord(len(same))
		}
		rest = append(rest, fmt.Sprintf("differed not significantly in %s (%s%s)", which, listNames(comparisonNames(same)), span))
	}
	if len(rest) > 0 {
		b.WriteString(": it " + strings.Join(rest, " and "))
	}
	fmt.Fprintf(&b, "; each comparison is one model that learns from both connectomes on one score, Δr is %s, not corrected for the %d comparisons%s.", test, n, note)
	return b.String()
}

// countWord writes n in words up to ten, in digits above.
func countWord(n int) string {
	if words := strings.Fields("zero one two three four five six seven eight nine ten"); n >= 0 && n < len(words) {
		return words[n]
	}
	return fmt.Sprint(n)
}

// comparisonNames names each comparison as "MODEL on TARGET".
func comparisonNames(cs []eval.Comparison) []string {
	out := make([]string, len(cs))
	for i, c := range cs {
		out[i] = c.Model + " on " + c.Target
	}
	return out
}

// listNames joins names as "a", "a and b" or "a, b and c".
func listNames(names []string) string {
	switch len(names) {
	case 0:
		return ""
	case 1:
		return names[0]
	}
	return strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
}

func answerNumber(x float64) string {
	if math.IsNaN(x) {
		return "–"
	}
	return fmt.Sprintf("%.3f", x)
}

func answerDiff(x float64) string {
	if math.IsNaN(x) {
		return "–"
	}
	return fmt.Sprintf("%+.3f", x)
}

func answerP(p float64) string {
	switch {
	case math.IsNaN(p):
		return "–"
	case p < 0.001:
		return "< 0.001"
	}
	return fmt.Sprintf("= %.3f", p)
}

// AnswerRun returns the answer that opens a run's summary and report: the
// answer about the scores (Answer) followed by that about the class labels
// (AnswerLabels), or the latter alone for a run with labels and no score
// comparisons.
func AnswerRun(exp *Experiment, comps []eval.Comparison, labels []eval.ClassGroup) string {
	answer := AnswerLabels(exp, labels)
	if len(comps) > 0 || answer == "" {
		answer = strings.TrimSpace(Answer(exp, comps) + " " + answer)
	}
	return answer
}

// AnswerLabels returns one sentence per class label of groups (the
// classification figures of a run, eval.SummarizeClasses after
// eval.CompareClasses), in order of first appearance: the models that fuse
// structure with function (Fusion) that learn the label, or, without
// such a model, the model of highest AUC within folds (the headline AUC,
// eval.AUCWithinFolds), each with its AUC within folds and bootstrap
// interval, and its difference in fold AUC from the label's
// reference baseline by the corrected resampled t-test, called a win or a
// loss at p < AnswerLevel as Answer does for r. "" without labels.
func AnswerLabels(exp *Experiment, groups []eval.ClassGroup) string {
	isFusion := make(map[string]bool)
	for _, name := range Fusion(exp) {
		isFusion[name] = true
	}
	var labels []string
	for _, g := range groups {
		if !slices.Contains(labels, g.Label) {
			labels = append(labels, g.Label)
		}
	}
	var sentences []string
	for _, label := range labels {
		var of []eval.ClassGroup
		for _, g := range groups {
			if g.Label == label {
				of = append(of, g)
			}
		}
		var shown []eval.ClassGroup
		for _, g := range of {
			if isFusion[g.Model] {
				shown = append(shown, g)
			}
		}
		lead := "Fusing structure with function"
		if len(shown) == 0 {
			best := of[0]
			for _, g := range of[1:] {
				if g.Pooled.AUCWithin > best.Pooled.AUCWithin || math.IsNaN(best.Pooled.AUCWithin) {
					best = g
				}
			}
			shown, lead = []eval.ClassGroup{best}, "The model of highest AUC within folds"
		}
		parts := make([]string, len(shown))
		for i, g := range shown {
			parts[i] = labelItem(g, of)
		}
		sentences = append(sentences, fmt.Sprintf("%s on the class label %s: %s.", lead, label, strings.Join(parts, "; ")))
	}
	if len(sentences) == 0 {
		return ""
	}
	return strings.Join(sentences, " ") + fmt.Sprintf(" (AUC within folds ranks each positive against each negative "+
		"participant of the same test fold, with its 95%% bootstrap interval; ΔAUC is the mean difference in fold AUC "+
		"from the reference baseline, tested by the corrected resampled t-test at p < %g.)", AnswerLevel)
}

// labelItem describes g: its AUC within folds and interval, and its
// comparison with the reference among of (the groups of its label).
func labelItem(g eval.ClassGroup, of []eval.ClassGroup) string {
	ci := ""
	if iv, ok := g.Intervals[eval.MetricAUCWithin]; ok && !math.IsNaN(iv.Lower) {
		ci = fmt.Sprintf(" (%s to %s)", answerNumber(iv.Lower), answerNumber(iv.Upper))
	}
	s := fmt.Sprintf("%s predicts %s with AUC within folds %s%s", g.Model, g.Label, answerNumber(g.Pooled.AUCWithin), ci)
	switch {
	case g.IsReference:
		return s + ", and is itself the reference baseline"
	case g.Reference == "":
		return s + ", with no reference baseline to compare it with"
	}
	ref := math.NaN()
	for _, r := range of {
		if r.Model == g.Reference {
			ref = r.Pooled.AUCWithin
		}
	}
	verdict := "not significantly different from"
	switch d := g.DiffAUC; {
	case d.P < AnswerLevel && d.MeanDiff > 0:
		verdict = "beating"
	case d.P < AnswerLevel && d.MeanDiff < 0:
		verdict = "worse than"
	}
	return fmt.Sprintf("%s, %s the reference baseline %s (AUC within folds %s), ΔAUC %s, p %s", s, verdict, g.Reference,
		answerNumber(ref), answerDiff(g.DiffAUC.MeanDiff), answerP(g.DiffAUC.P))
}
