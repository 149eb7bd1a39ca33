package experiment

import (
	"fmt"
	"math"

	"github.com/skein-neuro/skein/eval"
)

// A Break is one way a rerun broke its experiment's drift rule.
type Break struct {
	Model, Target string
	Metric        eval.Metric
	// Rule is the key of the broken setting: "drift.worsen.METRIC" (a
	// pooled value) or "drift.p_level" (a permutation p-value of Metric).
	Rule string
	// Before and After are the pooled values, or the p-values.
	Before, After float64
	// Threshold is the allowed worsening, or the p level.
	Threshold float64
}

func (b Break) String() string {
	if b.Rule == "drift.p_level" {
		return fmt.Sprintf("model %q, target %q: permutation p of %s rose from %.4g to %.4g, above %s = %g",
			b.Model, b.Target, b.Metric, b.Before, b.After, b.Rule, b.Threshold)
	}
	verb, by := "fell", b.Before-b.After
	if b.Metric.LowerIsBetter() {
		verb, by = "rose", b.After-b.Before
	}
	return fmt.Sprintf("model %q, target %q: pooled %s %s from %.4g to %.4g (by %.4g, more than %s = %g)",
		b.Model, b.Target, b.Metric, verb, b.Before, b.After, by, b.Rule, b.Threshold)
}

// A DriftReport is the outcome of CheckDrift.
type DriftReport struct {
	// Breaks lists every broken part of the rule, by model, target and
	// metric order; empty when the rerun keeps to the rule.
	Breaks []Break
	// Unchecked says, one line each, what the rule could not check and
	// why (a model or target in one run only, an undefined value, a run
	// without a permutation test).
	Unchecked []string
}

// CheckDrift applies rule to the pooled figures of after (the rerun)
// against before: for every model the rule checks and every target of
// after, each metric of rule.Worsen must not worsen by more than its
// amount, and, when rule.PLevel > 0, a permutation p-value at most
// PLevel in before must stay at most PLevel.
func CheckDrift(rule Drift, before, after *Folder) *DriftReport {
	rep := &DriftReport{}
	for _, g := range after.Summary.Groups {
		if !rule.Checks(g.Model) {
			continue
		}
		prev := before.Summary.Group(g.Model, g.Target)
		if prev == nil {
			rep.Unchecked = append(rep.Unchecked, fmt.Sprintf("model %q, target %q: not in the earlier run %s", g.Model, g.Target, before.Dir))
			continue
		}
		for _, m := range eval.Metrics() {
			limit, ok := rule.Worsen[string(m)]
			if !ok {
				continue
			}
			a, b := prev.Pooled.Get(m), g.Pooled.Get(m)
			if math.IsNaN(a) || math.IsNaN(b) {
				rep.Unchecked = append(rep.Unchecked, fmt.Sprintf("model %q, target %q: pooled %s is undefined (before %v, after %v)", g.Model, g.Target, m, a, b))
				continue
			}
			worse := a - b
			if m.LowerIsBetter() {
				worse = b - a
			}
			if worse > limit {
				rep.Breaks = append(rep.Breaks, Break{Model: g.Model, Target: g.Target, Metric: m,
					Rule: "drift.worsen." + string(m), Before: a, After: b, Threshold: limit})
			}
		}
		if rule.PLevel > 0 {
			m := rule.PMetric
			k := [2]string{g.Model, g.Target}
			pa, okA := before.P[k]
			pb, okB := after.P[k]
			switch {
			case !okA || !okB:
				rep.Unchecked = append(rep.Unchecked, fmt.Sprintf("model %q, target %q: drift.p_level needs a permutation test of the model in both runs", g.Model, g.Target))
			case pa.Get(m) <= rule.PLevel && pb.Get(m) > rule.PLevel:
				rep.Breaks = append(rep.Breaks, Break{Model: g.Model, Target: g.Target, Metric: m,
					Rule: "drift.p_level", Before: pa.Get(m), After: pb.Get(m), Threshold: rule.PLevel})
			}
		}
	}
	for _, g := range before.Summary.Groups {
		if rule.Checks(g.Model) && after.Summary.Group(g.Model, g.Target) == nil {
			rep.Unchecked = append(rep.Unchecked, fmt.Sprintf("model %q, target %q: in the earlier run %s but not in this one", g.Model, g.Target, before.Dir))
		}
	}
	return rep
}
