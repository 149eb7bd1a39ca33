package train

import (
	"errors"
	"fmt"
	"slices"
	"strconv"
	"strings"

	"github.com/skein-neuro/skein/data"
)

// Check reports every setting of d that cannot work on cohort c, before
// anything is trained, each error naming its key: a cv.stratify or
// cv.confounds column the cohort lacks, more folds than participants or
// groups (cv.folds), an inner validation part that leaves fewer than two
// participants to train on in some training fold (cv.inner_validation),
// a model whose kind needs more participants or groups in a training
// set than the smallest training fold holds (model.Kind.MinTrain, such as
// a ridge's inner folds), a class of a label (cohort.labels) with fewer
// participants, or groups, than k-fold folds (cv.folds), a label that is
// also a score target, a label no model can learn (no kind with
// NewClassifier) and a model whose kind learns neither the cohort's scores
// nor its labels. It returns all of them joined (errors.Join),
// or nil. The splits it checks are the run's own, so a run that passes
// Check does not fail on these grounds after training has begun.
func (d *Design) Check(c *data.Cohort) error {
	var errs []error
	if err := d.CV.checkAgainst(c); err != nil {
		errs = append(errs, err)
	}
	errs = append(errs, d.checkLabels(c)...)
	groups := Groups(c)
	errs = append(errs, d.CV.checkClasses(c, groups)...)
	f := d.CV.folds(d.Seed, c)
	if len(f.units(len(c.Participants))) < f.K {
		have := len(f.units(len(c.Participants)))
		return errors.Join(append(errs, fmt.Errorf("cv.folds: %d folds, but the cohort has only %d %s: use at most %d", f.K, have, unitWord(groups), have))...)
	}
	splits, err := f.Splits(len(c.Participants))
	if err != nil {
		return errors.Join(append(errs, fmt.Errorf("cv.folds: %w", err))...)
	}
	return errors.Join(append(errs, d.checkSplits(splits, groups, d.Models)...)...)
}

// CheckSampleSizes reports, as Check does, every setting that cannot work
// on the training subsets of the sample-size curve (SubsetSplits) of the
// named models (all when names is empty): an inner validation part or a
// kind's MinTrain that the subset of some fraction is too small for. The
// errors name the key sample_size.fractions and the fraction. It expects
// Check to have passed.
func (d *Design) CheckSampleSizes(c *data.Cohort, fractions []float64, names []string) error {
	splits, err := d.CV.folds(d.Seed, c).Splits(len(c.Participants))
	if err != nil {
		return nil // Check reports it
	}
	var models []ModelConfig
	for _, m := range d.Models {
		if len(names) == 0 || slices.Contains(names, m.Name) {
			models = append(models, m)
		}
	}
	sub := *d
	sub.InnerLoss = false // sample-size runs record no inner validation error
	groups := Groups(c)
	var errs []error
	for fi, subsets := range SubsetSplits(splits, groups, fractions, d.Seed) {
		for _, err := range sub.checkSplits(subsets, groups, models) {
			errs = append(errs, fmt.Errorf("sample_size.fractions: %g: %w", fractions[fi], err))
		}
	}
	return errors.Join(errs...)
}

// checkSplits checks the inner validation part of every training fold of
// splits and the MinTrain of every model of models against them.
func (d *Design) checkSplits(splits []Split, groups []string, models []ModelConfig) []error {
	var errs []error
	// The smallest training fold, and the smallest part of one left to
	// train on beside its inner validation part.
	minTrain, minFit, minFitUnits := -1, -1, -1
	var worstTrain, worstFit Split
	var worstValid int
	for _, s := range splits {
		seed := unitSeed(d.Seed, "inner", s.Repeat, s.Fold)
		fit, valid := InnerValidation(s.Train, groups, d.CV.innerCount(), d.CV.innerFraction(), seed)
		if n := countUnits(s.Train, groups); minTrain < 0 || n < minTrain {
			minTrain, worstTrain = n, s
		}
		if n := len(fit); minFit < 0 || n < minFit {
			minFit, worstFit, worstValid = n, s, len(valid)
		}
		if n := countUnits(fit, groups); len(valid) > 0 && (minFitUnits < 0 || n < minFitUnits) {
			minFitUnits = n
		}
	}
	switch {
	case minFit < 2 && worstValid == 0:
		errs = append(errs, fmt.Errorf("cv.folds: the training fold of repeat %d, fold %d holds only %d participants; want at least 2",
			worstFit.Repeat+1, worstFit.Fold+1, minFit))
	case minFit < 2:
		errs = append(errs, fmt.Errorf("cv.inner_validation: %v takes %d of the %d participants of the training fold of repeat %d, fold %d, leaving %d to train on; want at least 2 (lower it, or set it to 0 for none)",
			*d.CV.InnerValidation, worstValid, len(worstFit.Train), worstFit.Repeat+1, worstFit.Fold+1, minFit))
	}
	for _, m := range models {
		k, err := m.Spec()
		if err != nil || k.MinTrain == nil {
			continue
		}
		need, key := k.MinTrain(m.Settings())
		switch {
		case need <= 0:
		case minTrain < need:
			errs = append(errs, fmt.Errorf("model %q: %s: %d, but the training fold of repeat %d, fold %d holds only %d %s",
				m.Name, key, need, worstTrain.Repeat+1, worstTrain.Fold+1, minTrain, unitWord(groups)))
		case (d.InnerLoss || d.LabelLoss && k.NewClassifier != nil) && k.Baseline && minFit >= 2 && minFitUnits >= 0 && minFitUnits < need:
			// The reference baseline is chosen on inner validation
			// errors, for which the model trains without that part.
			errs = append(errs, fmt.Errorf("model %q: %s: %d, but a training fold without its inner validation part (cv.inner_validation) holds only %d %s; lower one, or name a comparison.reference",
				m.Name, key, need, minFitUnits, unitWord(groups)))
		}
	}
	return errs
}

// checkClasses returns an error for each class of each label of c held
// by fewer participants (or, with groups, groups) than there are k-fold
// folds, naming the label, the class, its count and cv.folds. It says
// nothing of leave-site-out folds, whose number the sites set.
func (cv CV) checkClasses(c *data.Cohort, groups []string) []error {
	if cv.SitesOut > 0 {
		return nil
	}
	k := *cv.Folds
	var errs []error
	for l, name := range c.Labels {
		members := make([][]int, len(c.Classes[l]))
		for i, p := range c.Participants {
			if j := p.Labels[l]; j >= 0 {
				members[j] = append(members[j], i)
			}
		}
		for j, class := range c.Classes[l] {
			n, units := len(members[j]), countUnits(members[j], groups)
			switch {
			case n < k:
				errs = append(errs, fmt.Errorf("cv.folds: %d folds, but class %q of label %q has only %d participants: some test fold would hold none of it; use at most %d folds or gather more participants of the class",
					k, class, name, n, max(n, 1)))
			case units < k:
				errs = append(errs, fmt.Errorf("cv.folds: %d folds, but class %q of label %q has its %d participants in only %d groups (cohort.group): some test fold would hold none of it; use at most %d folds",
					k, class, name, n, units, max(units, 1)))
			}
		}
	}
	return errs
}

// countUnits returns how many groups (participants, when groups is nil)
// the participants idx belong to.
func countUnits(idx []int, groups []string) int {
	if groups == nil {
		return len(idx)
	}
	seen := make(map[string]bool)
	for _, i := range idx {
		seen[groups[i]] = true
	}
	return len(seen)
}

// unitWord names what folds are dealt in: participants, or groups of
// cohort.group.
func unitWord(groups []string) string {
	if groups == nil {
		return "participants"
	}
	return "groups (cohort.group)"
}

// wordList lists names for a message: "a", "b", or none.
func wordList(names []string) string {
	if len(names) == 0 {
		return "none"
	}
	quoted := make([]string, len(names))
	for i, n := range names {
		quoted[i] = strconv.Quote(n)
	}
	return strings.Join(quoted, ", ")
}

// checkLabels reports a label that is also a score target, a label that
// no model of d can learn (no kind with NewClassifier), and a model that
// learns nothing of c: a kind of scores only without score targets, or
// of labels only without labels.
func (d *Design) checkLabels(c *data.Cohort) []error {
	var errs []error
	for _, label := range c.Labels {
		if slices.Contains(c.Targets, label) {
			errs = append(errs, fmt.Errorf("cohort.labels: %q is also in cohort.targets; a column is either a score or a class label", label))
		}
	}
	classifies := false
	for _, m := range d.Models {
		k, err := m.Spec()
		if err != nil {
			continue // Validate reports it
		}
		if k.NewClassifier != nil {
			classifies = true
		}
		scores := k.New != nil && len(c.Targets) > 0
		labels := k.NewClassifier != nil && len(c.Labels) > 0
		if !scores && !labels {
			errs = append(errs, fmt.Errorf("model %q: %w", m.Name, cannotLearn(k, c)))
		}
	}
	if len(c.Labels) > 0 && !classifies && len(d.Models) > 0 {
		errs = append(errs, fmt.Errorf("cohort.labels: no model learns class labels (%s): add a [[model]] whose kind classifies, such as majority, logistic or network", wordList(c.Labels)))
	}
	return errs
}
