package synth

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat"
)

// Sites says how AddSites spreads a synthetic cohort over invented
// scanning sites that shift both the connectomes and the scores: the
// situation in which a model can predict the scores from the site alone.
type Sites struct {
	// Count is the number of sites, at least 2. Participant i (0-based,
	// in cohort order) is at site i mod Count, labelled "site-A",
	// "site-B", ...
	Count int
	// EdgeShift is the SD, in Fisher z units, of a site's shift of each
	// functional edge: site b adds Δ_be ~ N(0, EdgeShift²), drawn once per
	// site and edge, to the Fisher z of edge e.
	EdgeShift float64
	// EdgeScale is the SD of ln λ_b, site b's scale of the Fisher z of
	// every functional edge: z' = λ_b·z + Δ_be.
	EdgeScale float64
	// ScoreShift moves the scores of site b by ScoreShift·c_b score SDs,
	// c_b evenly spaced from −1 (first site) to +1 (last site).
	ScoreShift float64
	// Seed draws the site effects.
	Seed int64
}

// AddSites assigns every participant of c a site (data.Participant.Site)
// and applies the site's effects of s to the raw functional matrices
// (F' = tanh(λ_b·atanh F + Δ_be) off the diagonal, symmetric) and to the
// scores (see Sites). Structural matrices are left as they are. c.Truth
// is unchanged: it describes the site-free cohort, whose planted signal
// the harmonised prediction should recover. It must be called before
// Preprocess.
func (c *Cohort) AddSites(s Sites) error {
	if s.Count < 2 || s.Count > 26 {
		return &ConfigError{Field: "Sites.Count", Value: s.Count, Want: "2 to 26"}
	}
	if s.EdgeShift < 0 || s.EdgeScale < 0 || math.IsNaN(s.ScoreShift) {
		return errors.New("synth: Sites.EdgeShift and EdgeScale must be zero or positive, ScoreShift a number")
	}
	rng := rand.New(rand.NewPCG(uint64(s.Seed), 0x73697465)) // "site"
	p := c.P()
	shift := make([][]float64, s.Count)
	scale := make([]float64, s.Count)
	for b := range shift {
		scale[b] = math.Exp(s.EdgeScale * rng.NormFloat64())
		shift[b] = make([]float64, p*p)
		for i := 0; i < p; i++ {
			for j := i + 1; j < p; j++ {
				shift[b][i*p+j] = s.EdgeShift * rng.NormFloat64()
			}
		}
	}
	sd := make([]float64, len(c.Targets))
	for t := range sd {
		var x []float64
		for _, q := range c.Participants {
			if v := q.Scores[t]; !math.IsNaN(v) {
				x = append(x, v)
			}
		}
		sd[t] = stat.StdDev(x, nil)
	}
	for i, q := range c.Participants {
		b := i % s.Count
		q.Site = fmt.Sprintf("site-%c", 'A'+b)
		if f := q.Functional; f != nil {
			for j := 0; j < p; j++ {
				for k := j + 1; k < p; k++ {
					v := math.Tanh(scale[b]*math.Atanh(f.At(j, k)) + shift[b][j*p+k])
					f.Set(j, k, v)
					f.Set(k, j, v)
				}
			}
		}
		centre := -1 + 2*float64(b)/float64(s.Count-1)
		for t := range q.Scores {
			q.Scores[t] += s.ScoreShift * centre * sd[t]
		}
	}
	return nil
}
