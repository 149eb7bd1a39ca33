package report

import (
	"cmp"
	"slices"

	"github.com/skein-neuro/skein/train"
)

// Every table and figure of a report lists models and scores in one
// order, the order of summary.md and metrics.json: the models as the
// experiment lists them (baselines where the experiment puts them), then
// the scores as its cohort lists them. Names the experiment does not know
// come last, by name.

// modelRank returns the place of model in the experiment's list.
func (r *Run) modelRank(model string) int {
	if i := slices.IndexFunc(r.Experiment.Models, func(m train.ModelConfig) bool { return m.Name == model }); i >= 0 {
		return i
	}
	return len(r.Experiment.Models)
}

// targetRank returns the place of target in the experiment's targets.
func (r *Run) targetRank(target string) int {
	if i := slices.Index(r.Experiment.Cohort.Targets, target); i >= 0 {
		return i
	}
	return len(r.Experiment.Cohort.Targets)
}

// labelRank returns the place of label in the experiment's class labels.
func (r *Run) labelRank(label string) int {
	if i := slices.Index(r.Experiment.Cohort.Labels, label); i >= 0 {
		return i
	}
	return len(r.Experiment.Cohort.Labels)
}

// compareUnits orders (model, target) pairs in report order.
func (r *Run) compareUnits(modelA, targetA, modelB, targetB string) int {
	return cmp.Or(
		cmp.Compare(r.modelRank(modelA), r.modelRank(modelB)),
		cmp.Compare(modelA, modelB),
		cmp.Compare(r.targetRank(targetA), r.targetRank(targetB)),
		cmp.Compare(targetA, targetB))
}

// targets returns the targets of the run's summary in report order.
func (r *Run) targets() []string {
	var out []string
	for _, g := range r.Summary.Groups {
		if !slices.Contains(out, g.Target) {
			out = append(out, g.Target)
		}
	}
	slices.SortStableFunc(out, func(a, b string) int {
		return cmp.Or(cmp.Compare(r.targetRank(a), r.targetRank(b)), cmp.Compare(a, b))
	})
	return out
}
