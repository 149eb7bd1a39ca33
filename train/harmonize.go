package train

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/internal/enum"
)

// harmonizerName is the Name of a Harmonizer in saved files.
const harmonizerName = "combat"

// UnseenSite says what harmonisation does with a participant whose site
// no training participant shares (the key cv.harmonize.unseen_site):
// UnseenError or UnseenPooled ("" is unset).
type UnseenSite string

// Policies for a site absent from the training fold.
const (
	// UnseenError stops the run with an error naming the site.
	UnseenError UnseenSite = "error"
	// UnseenPooled harmonises the participant with the training sites'
	// estimates averaged, weighted by site size: γ = Σ_b n_b·γ*_b / n and
	// δ² = Σ_b n_b·δ*²_b / n, as if the site were the average training
	// site.
	UnseenPooled UnseenSite = "pooled"
)

// UnmarshalText sets u to the word text: "error", "pooled" or "" (unset).
// Another word is an error listing these.
func (u *UnseenSite) UnmarshalText(text []byte) error {
	return enum.Parse(u, text, UnseenError, UnseenPooled)
}

// MarshalText returns the word of u.
func (u UnseenSite) MarshalText() ([]byte, error) { return []byte(u), nil }

// String returns the word of u.
func (u UnseenSite) String() string { return string(u) }

// UnmarshalText sets m to the word text: "parametric", "nonparametric" or
// "" (unset). Another word is an error listing these.
func (m *ComBatMethod) UnmarshalText(text []byte) error {
	return enum.Parse(m, text, HarmonizeParametric, HarmonizeNonparametric)
}

// MarshalText returns the word of m.
func (m ComBatMethod) MarshalText() ([]byte, error) { return []byte(m), nil }

// String returns the word of m.
func (m ComBatMethod) String() string { return string(m) }

// A Harmonizer is an input step (Prep) that harmonises the edges of the
// participants' matrices across scanning sites with ComBat (see ComBat
// for the model and FitComBat for the fit): for each harmonised modality,
// the p(p−1)/2 edges i < j of the training participants are the features,
// their sites (data.Participant.Site) the batches and the covariates
// Covariates names the effects ComBat preserves. Apply replaces entries
// (i, j) and (j, i) by the harmonised value of edge i < j, each through
// the same affine map of its own value, so a symmetric matrix stays
// symmetric; the diagonal is kept.
//
// Fit reads matrices, sites and the preserved covariates, never scores,
// and the preserved covariates are never targets (the experiment's check
// says why: the scores would flow into the edges models learn from).
// Fitted on a fold's training participants, it is applied unchanged to
// the inner validation part, the test fold and the participants of skein
// predict, which reads it from the saved fold model (fitted.json).
//
// A participant without a site, with a missing preserved covariate, or
// (with Unseen "error") from a site that no training participant shares
// is an error naming the participant, the site column and the site.
type Harmonizer struct {
	// Functional and Structural choose the modalities to harmonise.
	Functional bool `json:"functional"`
	Structural bool `json:"structural"`
	// Covariates names the cohort covariates whose effects are preserved.
	Covariates []string `json:"covariates,omitempty"`
	// Method is HarmonizeParametric ("" means it) or
	// HarmonizeNonparametric.
	Method ComBatMethod `json:"method"`
	// Unseen is what Apply does with a site Fit did not see; "" means
	// UnseenError.
	Unseen UnseenSite `json:"unseen_site"`
	// SiteColumn names the site column in messages (data.Cohort.SiteColumn).
	SiteColumn string `json:"site_column,omitempty"`
	// P is the number of regions, set by Fit.
	P int `json:"p"`
	// FunctionalFit and StructuralFit hold the fitted estimates.
	FunctionalFit *ComBat `json:"functional_fit,omitempty"`
	StructuralFit *ComBat `json:"structural_fit,omitempty"`
}

// Name returns "combat".
func (h *Harmonizer) Name() string { return harmonizerName }

type harmonized struct {
	name string
	get  func(*data.Participant) *mat.Dense
	set  func(*data.Participant, *mat.Dense)
	fit  **ComBat
}

func (h *Harmonizer) modalities() []harmonized {
	var ms []harmonized
	if h.Functional {
		ms = append(ms, harmonized{"functional", (*data.Participant).FunctionalMatrix,
			func(p *data.Participant, m *mat.Dense) { p.Functional = m }, &h.FunctionalFit})
	}
	if h.Structural {
		ms = append(ms, harmonized{"structural", (*data.Participant).StructuralMatrix,
			func(p *data.Participant, m *mat.Dense) { p.Structural = m }, &h.StructuralFit})
	}
	return ms
}

func (h *Harmonizer) column() string {
	if h.SiteColumn == "" {
		return "cohort.site"
	}
	return fmt.Sprintf("cohort.site (column %q)", h.SiteColumn)
}

// sites returns the site of every participant of c, an error naming the
// first without one.
func (h *Harmonizer) sites(c *data.Cohort) ([]string, error) {
	sites := make([]string, len(c.Participants))
	for i, p := range c.Participants {
		if p.Site == "" {
			return nil, fmt.Errorf("participant %s has no site in %s", p.ID, h.column())
		}
		sites[i] = p.Site
	}
	return sites, nil
}

// covariates returns the preserved covariates of c, nil for none; a
// missing value is an error naming the participant and the covariate.
func (h *Harmonizer) covariates(c *data.Cohort) (*mat.Dense, error) {
	if len(h.Covariates) == 0 {
		return nil, nil
	}
	cov, err := covariateMatrix(c, h.Covariates)
	if err != nil {
		return nil, fmt.Errorf("preserved covariates: %w", err)
	}
	for i, p := range c.Participants {
		for k, name := range h.Covariates {
			if math.IsNaN(cov.At(i, k)) {
				return nil, fmt.Errorf("participant %s has no value of the preserved covariate %q", p.ID, name)
			}
		}
	}
	return cov, nil
}

// edges returns the upper-triangle edges of modality m of c's
// participants, one row per participant (row-major i < j), and the lower
// ones (entries (j, i)) in the same order.
func (h *Harmonizer) edges(m harmonized, c *data.Cohort) (upper, lower *mat.Dense, err error) {
	p := h.P
	E := p * (p - 1) / 2
	upper = mat.NewDense(len(c.Participants), E, nil)
	lower = mat.NewDense(len(c.Participants), E, nil)
	for k, pt := range c.Participants {
		x := m.get(pt)
		if x == nil {
			return nil, nil, fmt.Errorf("participant %s has no %s matrix", pt.ID, m.name)
		}
		if r, cols := x.Dims(); r != p || cols != p {
			return nil, nil, fmt.Errorf("participant %s: the %s matrix is %d × %d, want %d × %d", pt.ID, m.name, r, cols, p, p)
		}
		up, low := upper.RawRowView(k), lower.RawRowView(k)
		for i, ij := 0, 0; i < p; i++ {
			for j := i + 1; j < p; j, ij = j+1, ij+1 {
				up[ij], low[ij] = x.At(i, j), x.At(j, i)
			}
		}
	}
	return upper, lower, nil
}

// Fit fits ComBat on the edges of each harmonised modality of the
// participants of train, with their sites and preserved covariates.
func (h *Harmonizer) Fit(train *data.Cohort) error {
	if len(train.Participants) == 0 {
		return errors.New("no training participants")
	}
	if h.Method == "" {
		h.Method = HarmonizeParametric
	}
	sites, err := h.sites(train)
	if err != nil {
		return err
	}
	cov, err := h.covariates(train)
	if err != nil {
		return err
	}
	h.P = train.P()
	for _, m := range h.modalities() {
		upper, _, err := h.edges(m, train)
		if err != nil {
			return err
		}
		fit, err := FitComBat(upper, sites, cov, h.Method)
		if err != nil {
			return h.siteErr(fmt.Errorf("%s edges: %w", m.name, err))
		}
		*m.fit = fit
	}
	return nil
}

// siteErr adds the site column to a *SiteError's message.
func (h *Harmonizer) siteErr(err error) error {
	var se *SiteError
	if errors.As(err, &se) {
		hint := ""
		if errors.Is(err, ErrUnseenSite) {
			hint = fmt.Sprintf(" (cv.harmonize.unseen_site = %q harmonises such a participant as the average training site)", UnseenPooled)
		}
		return fmt.Errorf("%s: %w%s", h.column(), err, hint)
	}
	return err
}

// Apply returns c with each harmonised modality's matrices replaced by
// harmonised ones (see Harmonizer).
func (h *Harmonizer) Apply(c *data.Cohort) (*data.Cohort, error) {
	ms := h.modalities()
	for _, m := range ms {
		if *m.fit == nil {
			return nil, fmt.Errorf("%s: not fitted", m.name)
		}
		if err := (*m.fit).check(h.P * (h.P - 1) / 2); err != nil {
			return nil, fmt.Errorf("%s_fit: %w", m.name, err)
		}
	}
	out := *c
	out.Participants = make([]*data.Participant, len(c.Participants))
	for i, p := range c.Participants {
		q := *p
		out.Participants[i] = &q
	}
	if len(c.Participants) == 0 {
		return &out, nil
	}
	sites, err := h.sites(c)
	if err != nil {
		return nil, err
	}
	cov, err := h.covariates(c)
	if err != nil {
		return nil, err
	}
	p := h.P
	for _, m := range ms {
		fit, pooled := *m.fit, h.Unseen == UnseenPooled
		upper, lower, err := h.edges(m, c)
		if err != nil {
			return nil, err
		}
		harm, err := fit.Apply(upper, sites, cov, pooled)
		if err != nil {
			return nil, h.siteErr(fmt.Errorf("%s edges: %w", m.name, err))
		}
		for k, pt := range out.Participants {
			_, scale, _ := fit.site(sites[k], pooled)
			x := m.get(pt)
			z := mat.NewDense(p, p, nil)
			hu, up, low := harm.RawRowView(k), upper.RawRowView(k), lower.RawRowView(k)
			for i, ij := 0, 0; i < p; i++ {
				z.Set(i, i, x.At(i, i))
				for j := i + 1; j < p; j, ij = j+1, ij+1 {
					z.Set(i, j, hu[ij])
					z.Set(j, i, hu[ij]+(low[ij]-up[ij])/math.Sqrt(scale[ij]))
				}
			}
			m.set(pt, z)
		}
	}
	return &out, nil
}
