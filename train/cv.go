package train

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/internal/enum"
)

// CV is the cross-validation scheme: the [cv] table of an experiment file.
// When the cohort has a grouping column (cohort.group), folds always keep
// each group whole. A nil setting takes its default; Go code sets one as
// CV{Folds: new(10)}.
type CV struct {
	// Folds is k of k-fold cross-validation, at least 2; nil takes the
	// default 5 (set it from Go as new(10)).
	Folds *int `toml:"folds"`
	// Repeats is how many times the k-fold cut is redone with a fresh
	// shuffle, at least 1; nil takes the default 1.
	Repeats *int `toml:"repeats"`
	// Stratify names a target whose quantiles the folds are balanced on,
	// or a label (cohort.labels) whose classes the folds are stratified
	// by exactly (Folds.Classes); "" (the default) stratifies by the
	// cohort's first label when it has one, and not at all otherwise.
	Stratify string `toml:"stratify"`
	// InnerValidation is the inner validation part of each training fold,
	// which drives early stopping and model choice: a fraction of the
	// training fold when below 1, else a count of participants; 0 means no
	// inner validation. Default 0.2.
	InnerValidation *float64 `toml:"inner_validation"`
	// Confounds names covariates regressed out of every score, fitted on
	// each training fold alone (cross-validated confound regression).
	// Default none.
	Confounds []string `toml:"confounds"`
	// SiteConfound also regresses the site (cohort.site) out of every
	// score, as one-hot columns (one per training site but the first,
	// sorted) fitted in each training fold with the confounds. Default
	// false.
	SiteConfound bool `toml:"site_confound"`
	// SitesOut, when above 0, makes the folds leave-k-sites-out with
	// k = SitesOut: the sites (cohort.site) are shuffled and dealt k to a
	// fold, so there are ⌈S/k⌉ folds for S sites and Folds is not read;
	// 1 is leave-one-site-out. Default 0 (k-fold).
	SitesOut int `toml:"sites_out"`
	// StratifySite balances k-fold folds on site: each site's
	// participants (or groups) are spread as evenly over the folds as
	// they can be. Default false.
	StratifySite bool `toml:"stratify_site"`
	// Harmonize is the ComBat harmonisation of the edges across sites
	// ([cv.harmonize]), fitted on each training fold; nil for none.
	Harmonize *Harmonize `toml:"harmonize"`
	// Threshold is the probability of the positive class (a binary
	// label's class at index 1) from which a participant is predicted
	// positive, for accuracy, balanced accuracy, sensitivity and
	// specificity; AUC, log loss and Brier do not depend on it, nor do
	// labels of more than two classes (the most probable class is
	// predicted). In (0, 1); nil takes the default 0.5.
	Threshold *float64 `toml:"threshold"`
}

// Harmonize is the [cv.harmonize] table of an experiment file: ComBat
// harmonisation of the connectome edges across the sites of cohort.site,
// fitted on each training fold alone and applied to its test fold (see
// Harmonizer). Every model, baseline or network, learns from the
// harmonised edges. For example:
//
//	[cv.harmonize]
//	method = "parametric"
//	preserve = ["age", "sex"]
//	unseen_site = "error"
type Harmonize struct {
	// Method is "parametric" (default) or "nonparametric" empirical Bayes.
	Method ComBatMethod `toml:"method"`
	// Preserve names covariates (cohort.covariates) whose effects on the
	// edges ComBat keeps. A target is never allowed: its effect would be
	// written into the edges of the test participants' neighbours in the
	// fit, which leaks the scores into the inputs.
	Preserve []string `toml:"preserve"`
	// UnseenSite is "error" (default): a test participant from a site
	// absent from the training fold stops the run naming the site; or
	// "pooled": such a participant is harmonised as the average training
	// site. Leave-site-out folds (cv.sites_out) need "pooled".
	UnseenSite UnseenSite `toml:"unseen_site"`
}

// SetDefaults fills every unset field with its documented default.
func (cv *CV) SetDefaults() {
	if cv.Folds == nil {
		cv.Folds = new(5)
	}
	if cv.Repeats == nil {
		cv.Repeats = new(1)
	}
	if cv.InnerValidation == nil {
		cv.InnerValidation = new(0.2)
	}
	if cv.Confounds == nil {
		cv.Confounds = []string{}
	}
	if cv.Threshold == nil {
		cv.Threshold = new(0.5)
	}
	if h := cv.Harmonize; h != nil {
		if h.Method == "" {
			h.Method = HarmonizeParametric
		}
		if h.UnseenSite == "" {
			h.UnseenSite = UnseenError
		}
	}
}

// Validate reports the first setting that cannot work, naming its key.
// It expects SetDefaults to have been called.
func (cv CV) Validate() error {
	switch {
	case cv.Folds == nil || *cv.Folds < 2:
		return fmt.Errorf("cv.folds: need at least 2, found %s", optional(cv.Folds))
	case cv.Repeats == nil || *cv.Repeats < 1:
		return fmt.Errorf("cv.repeats: need at least 1, found %s", optional(cv.Repeats))
	case cv.InnerValidation != nil && (*cv.InnerValidation < 0 || math.IsNaN(*cv.InnerValidation) ||
		*cv.InnerValidation >= 1 && *cv.InnerValidation != math.Trunc(*cv.InnerValidation)):
		return fmt.Errorf("cv.inner_validation: want a fraction in [0, 1) or a whole count, found %v", *cv.InnerValidation)
	case cv.Threshold != nil && !(*cv.Threshold > 0 && *cv.Threshold < 1):
		return fmt.Errorf("cv.threshold: want a probability in (0, 1), found %v", *cv.Threshold)
	case cv.SitesOut < 0:
		return fmt.Errorf("cv.sites_out: want 0 (k-fold) or a number of sites per fold, found %d", cv.SitesOut)
	case cv.SitesOut > 0 && cv.StratifySite:
		return errors.New("cv.stratify_site: leave-site-out folds (cv.sites_out) hold whole sites; stratifying them by site means nothing")
	case cv.SitesOut > 0 && cv.SiteConfound:
		return errors.New("cv.site_confound: leave-site-out folds (cv.sites_out) test on sites no training participant is from, whose confound effect cannot be fitted")
	case cv.SitesOut > 0 && cv.Stratify != "":
		return errors.New("cv.stratify: leave-site-out folds (cv.sites_out) are made of whole sites and cannot be stratified on a target")
	}
	if h := cv.Harmonize; h != nil {
		if err := enum.Check(h.Method); err != nil {
			return fmt.Errorf("cv.harmonize.method: %w", err)
		}
		if err := enum.Check(h.UnseenSite); err != nil {
			return fmt.Errorf("cv.harmonize.unseen_site: %w", err)
		}
		if cv.SitesOut > 0 && h.UnseenSite != UnseenPooled {
			return fmt.Errorf("cv.harmonize.unseen_site: leave-site-out folds (cv.sites_out = %d) test on sites absent from training; set unseen_site = %q to harmonise them as the average training site", cv.SitesOut, UnseenPooled)
		}
	}
	return nil
}

// optional formats a setting that may be unset.
func optional(v *int) string {
	if v == nil {
		return "nothing"
	}
	return fmt.Sprint(*v)
}

// innerCount and innerFraction read InnerValidation as a count or a fraction.
func (cv CV) innerCount() int {
	if v := *cv.InnerValidation; v >= 1 {
		return int(v)
	}
	return 0
}

func (cv CV) innerFraction() float64 {
	if v := *cv.InnerValidation; v < 1 {
		return v
	}
	return 0
}

// folds returns the fold scheme of the experiment for the cohort.
func (cv CV) folds(seed int64, c *data.Cohort) Folds {
	f := Folds{K: *cv.Folds, Repeats: *cv.Repeats, Seed: uint64(seed), Groups: Groups(c), SitesOut: cv.SitesOut}
	if cv.SitesOut > 0 || cv.StratifySite {
		f.Sites = siteLabels(c)
	}
	if l := cv.stratifyLabel(c); l >= 0 {
		f.Classes = make([]int, len(c.Participants))
		for i, p := range c.Participants {
			f.Classes[i] = p.Labels[l]
		}
	} else if t := slices.Index(c.Targets, cv.Stratify); cv.Stratify != "" && t >= 0 {
		f.Strata = make([]float64, len(c.Participants))
		for i, p := range c.Participants {
			f.Strata[i] = p.Scores[t]
		}
	}
	return f
}

// stratifyLabel returns the index of the label of c the folds are
// stratified by: cv.Stratify when it names a label, the first label when
// cv.Stratify is "" (and the folds are not leave-site-out), else −1.
func (cv CV) stratifyLabel(c *data.Cohort) int {
	switch {
	case cv.Stratify != "":
		return slices.Index(c.Labels, cv.Stratify)
	case len(c.Labels) > 0 && cv.SitesOut == 0:
		return 0
	}
	return -1
}

// checkAgainst reports every setting that names what the cohort lacks:
// a cv.stratify target or cv.confounds covariate, joined (errors.Join).
func (cv CV) checkAgainst(c *data.Cohort) error {
	var errs []error
	if cv.Stratify != "" && !slices.Contains(c.Targets, cv.Stratify) && !slices.Contains(c.Labels, cv.Stratify) {
		if len(c.Labels) == 0 {
			errs = append(errs, fmt.Errorf("cv.stratify: %q is not a target of the cohort (targets: %s)", cv.Stratify, wordList(c.Targets)))
		} else {
			errs = append(errs, fmt.Errorf("cv.stratify: %q is not a target or label of the cohort (targets: %s; labels: %s)", cv.Stratify, wordList(c.Targets), wordList(c.Labels)))
		}
	}
	for _, name := range cv.Confounds {
		if !slices.Contains(c.Covariates, name) {
			errs = append(errs, fmt.Errorf("cv.confounds: %q is not a covariate of the cohort (covariates: %s)", name, wordList(c.Covariates)))
		}
	}
	if h := cv.Harmonize; h != nil {
		for _, name := range h.Preserve {
			if slices.Contains(c.Targets, name) {
				errs = append(errs, fmt.Errorf("cv.harmonize.preserve: %q is a target; preserving the scores' effect on the edges would write each training fold's scores into the inputs the models learn from (leakage), so targets are never preserved", name))
				continue
			}
			if !slices.Contains(c.Covariates, name) {
				errs = append(errs, fmt.Errorf("cv.harmonize.preserve: %q is not a covariate of the cohort (covariates: %s)", name, wordList(c.Covariates)))
			}
		}
	}
	if cv.Harmonize != nil || cv.SiteConfound || cv.SitesOut > 0 || cv.StratifySite {
		if err := CheckSites(c, cv.SitesOut); err != nil {
			errs = append(errs, err)
		}
	}
	return errors.Join(errs...)
}

// CheckSites reports a cohort whose sites cannot serve a site-aware run:
// a participant without a site (cohort.site unset, or its cell empty), a
// site with a single participant (no site effect can be estimated from
// it), fewer than two sites, or, with sitesOut > 0, fewer than sitesOut
// + 1 sites (every fold must leave a site to train on). The error names
// the site column (siteKey) and the site or participant.
func CheckSites(c *data.Cohort, sitesOut int) error {
	count := make(map[string]int)
	var order []string
	for _, p := range c.Participants {
		if p.Site == "" {
			return fmt.Errorf("%s: participant %s has no site (a site-aware run needs the site column, and a site for everyone)", siteKey(c), p.ID)
		}
		if count[p.Site] == 0 {
			order = append(order, p.Site)
		}
		count[p.Site]++
	}
	for _, s := range order {
		if count[s] < 2 {
			return fmt.Errorf("%s: site %q has one participant; a site's effect needs at least two (merge it with a similar site or leave it out)", siteKey(c), s)
		}
	}
	switch {
	case len(order) == 0:
		return errors.New("cohort.site: no participants")
	case len(order) < 2:
		return fmt.Errorf("%s: one site (%q); harmonisation, site confounds and site-aware folds need at least two", siteKey(c), order[0])
	case sitesOut > 0 && len(order) <= sitesOut:
		return fmt.Errorf("cv.sites_out: %d sites per fold, but the cohort has %d sites (need more than %d)", sitesOut, len(order), sitesOut)
	}
	return nil
}

// siteDummyPrefix begins the name of a site's one-hot confound column.
const siteDummyPrefix = "site="

// withSiteConfound returns d and c unchanged without cv.site_confound;
// with it, a copy of d whose cv.confounds also name one one-hot column per
// site but the first (sites sorted), "site=NAME", and a copy of c whose
// participants carry those columns as covariates (1 at the participant's
// site, else 0). The columns only code the sites; their coefficients are
// fitted in each training fold with the other confounds (TargetPrep). The
// copy of d has SiteConfound unset, so that it is not applied twice.
func withSiteConfound(d *Design, c *data.Cohort) (*Design, *data.Cohort) {
	if !d.CV.SiteConfound {
		return d, c
	}
	sites := slices.Sorted(slices.Values(uniq(siteLabels(c))))
	out := *d
	out.CV.SiteConfound = false
	out.CV.Confounds = append(slices.Clone(d.CV.Confounds), siteColumns(sites)...)
	oc, _ := AddSiteColumns(c, sites)
	return &out, oc
}

// siteColumns returns the names of the one-hot columns of sites (sorted):
// "site=NAME" for every site but the first.
func siteColumns(sites []string) []string {
	names := make([]string, 0, len(sites)-1)
	for _, s := range sites[1:] {
		names = append(names, siteDummyPrefix+s)
	}
	return names
}

// AddSiteColumns returns a copy of c whose participants carry the one-hot
// site columns of sites (sorted; a TargetPrep's SiteLevels) as covariates
// "site=NAME", one per site but the first: 1 at the participant's site,
// else 0. c's matrices and scores are shared. A participant whose site is
// not among sites is an error naming the site: the site's confound effect
// was never fitted.
func AddSiteColumns(c *data.Cohort, sites []string) (*data.Cohort, error) {
	names := siteColumns(sites)
	oc := *c
	oc.Covariates = append(slices.Clone(c.Covariates), names...)
	oc.Participants = make([]*data.Participant, len(c.Participants))
	for i, p := range c.Participants {
		if !slices.Contains(sites, p.Site) {
			return nil, fmt.Errorf("%s: participant %s is from site %q, which none of the training participants came from (sites %v), so its confound effect is unknown", siteKey(c), p.ID, p.Site, sites)
		}
		q := *p
		q.Covariates = slices.Grow(slices.Clone(p.Covariates), len(names))
		for _, s := range sites[1:] {
			v := 0.0
			if p.Site == s {
				v = 1
			}
			q.Covariates = append(q.Covariates, v)
		}
		oc.Participants[i] = &q
	}
	return &oc, nil
}

// siteLabels returns the site of every participant of c.
func siteLabels(c *data.Cohort) []string {
	sites := make([]string, len(c.Participants))
	for i, p := range c.Participants {
		sites[i] = p.Site
	}
	return sites
}

// checkFoldSites reports a test-fold site that no training participant of
// split shares when a fold-fitted step needs every site in training: the
// site confound always, harmonisation unless unseen_site = "pooled".
func checkFoldSites(cv CV, c *data.Cohort, split Split) error {
	siteConfound := slices.ContainsFunc(cv.Confounds, func(name string) bool { return strings.HasPrefix(name, siteDummyPrefix) })
	harmonize := cv.Harmonize != nil && cv.Harmonize.UnseenSite != UnseenPooled
	if !siteConfound && !harmonize {
		return nil
	}
	inTrain := make(map[string]bool)
	for _, i := range split.Train {
		inTrain[c.Participants[i].Site] = true
	}
	for _, i := range split.Test {
		if s := c.Participants[i].Site; !inTrain[s] {
			if siteConfound {
				return fmt.Errorf("%s: site %q is in the test fold only, so its confound effect (cv.site_confound) cannot be fitted; cv.stratify_site = true spreads every site over the folds", siteKey(c), s)
			}
			return fmt.Errorf("%s: site %q is in the test fold only, so ComBat cannot estimate its effect; cv.stratify_site = true spreads every site over the folds, cv.harmonize.unseen_site = %q harmonises it as the average training site", siteKey(c), s, UnseenPooled)
		}
	}
	return nil
}

// siteKey names the site column of c in messages: the key cohort.site and,
// when known, the column's name.
func siteKey(c *data.Cohort) string {
	if c.SiteColumn == "" {
		return "cohort.site"
	}
	return fmt.Sprintf("cohort.site (column %q)", c.SiteColumn)
}
