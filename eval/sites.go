package eval

import (
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"
)

// SiteScores are the scores of one model on one target over the test
// predictions of the participants of one site, all repeats and folds
// pooled (each participant once per repeat).
type SiteScores struct {
	Site string
	// Participants counts the site's distinct participants with a
	// prediction: the n of the Fisher z weights of Heterogeneity.
	Participants int
	Scores
}

// Heterogeneity says how much a model's Pearson r varies across sites.
//
// With r_s the Pearson r of site s (its SiteScores) and n_s its
// participants, over the S sites with n_s ≥ 4 and a defined r_s:
//
//	z_s = atanh r_s,  w_s = n_s − 3,  z̄ = Σ w_s·z_s / Σ w_s,
//	Q = Σ w_s·(z_s − z̄)²,  df = S − 1,  I² = max(0, (Q − df)/Q),
//
// Cochran's Q of the Fisher z of the per-site r (Cochran 1954, Biometrics
// 10:101; the inverse-variance weights n − 3 of Fisher z, Hedges & Olkin
// 1985, ch. 11) and I², the share of the variation across sites beyond
// what sampling error explains (Higgins & Thompson 2002, Statistics in
// Medicine 21:1539). P is the upper tail of χ² with df degrees of freedom
// at Q: small when the effect differs between sites. SD is the sample SD
// (S − 1) of the r_s themselves. Every field is NaN with fewer than two
// such sites.
type Heterogeneity struct {
	Sites  int
	SD     float64
	Q      float64
	DF     int
	P      float64
	I2     float64
	Pooled float64 // tanh z̄: the fixed-effect mean r across sites
}

// SiteHeterogeneity returns the Heterogeneity of the per-site scores.
func SiteHeterogeneity(sites []SiteScores) Heterogeneity {
	var r, z, w []float64
	for _, s := range sites {
		v := s.Get(MetricPearson)
		if s.Participants < 4 || math.IsNaN(v) || math.Abs(v) >= 1 {
			continue
		}
		r = append(r, v)
		z = append(z, math.Atanh(v))
		w = append(w, float64(s.Participants-3))
	}
	h := Heterogeneity{Sites: len(r), SD: math.NaN(), Q: math.NaN(), P: math.NaN(), I2: math.NaN(), Pooled: math.NaN()}
	if len(r) < 2 {
		return h
	}
	_, h.SD = meanSD(r)
	var sw, swz float64
	for k := range z {
		sw += w[k]
		swz += w[k] * z[k]
	}
	zbar := swz / sw
	h.Q = 0
	for k := range z {
		h.Q += w[k] * (z[k] - zbar) * (z[k] - zbar)
	}
	h.DF = len(r) - 1
	h.P = distuv.ChiSquared{K: float64(h.DF)}.Survival(h.Q)
	h.I2 = 0
	if h.Q > 0 {
		h.I2 = math.Max(0, (h.Q-float64(h.DF))/h.Q)
	}
	h.Pooled = math.Tanh(zbar)
	return h
}

// AddSites scores every group of s per site: siteOf maps a participant_id
// to its site; rows are the predictions s was made from. Each group gets
// one SiteScores per site, sorted by site, and its Heterogeneity. Rows of
// participants siteOf does not know are left out.
func (s *Summary) AddSites(rows []Prediction, siteOf map[string]string) {
	for gi := range s.Groups {
		g := &s.Groups[gi]
		bySite := make(map[string][]int)
		people := make(map[string]map[string]bool)
		for i, p := range rows {
			if p.Model != g.Model || p.Target != g.Target {
				continue
			}
			site, ok := siteOf[p.ParticipantID]
			if !ok {
				continue
			}
			bySite[site] = append(bySite[site], i)
			if people[site] == nil {
				people[site] = make(map[string]bool)
			}
			if !math.IsNaN(p.Predicted) && !math.IsNaN(p.Observed) {
				people[site][p.ParticipantID] = true
			}
		}
		g.Sites = nil
		for _, site := range slices.Sorted(mapKeys(bySite)) {
			g.Sites = append(g.Sites, SiteScores{Site: site, Participants: len(people[site]), Scores: scoreRows(rows, bySite[site], s.Bins)})
		}
		h := SiteHeterogeneity(g.Sites)
		g.Heterogeneity = &h
	}
}

func mapKeys[V any](m map[string]V) func(func(string) bool) {
	return func(yield func(string) bool) {
		for k := range m {
			if !yield(k) {
				return
			}
		}
	}
}

// writeSitesMarkdown writes, when some group has per-site scores, a table
// per target of each model's per-site r and the heterogeneity figures.
func (s *Summary) writeSitesMarkdown(b *strings.Builder) {
	var sites []string
	for _, g := range s.Groups {
		for _, ss := range g.Sites {
			if !slices.Contains(sites, ss.Site) {
				sites = append(sites, ss.Site)
			}
		}
	}
	if len(sites) == 0 {
		return
	}
	slices.Sort(sites)
	b.WriteString("\n### Per site\n\n| model | target |")
	for _, site := range sites {
		fmt.Fprintf(b, " r %s |", EscapeMarkdown(site))
	}
	b.WriteString(" SD of r | Q (df) | p | I² |\n| --- | --- |")
	for range sites {
		b.WriteString(" ---: |")
	}
	b.WriteString(" ---: | ---: | ---: | ---: |\n")
	for _, g := range s.Groups {
		if g.Heterogeneity == nil {
			continue
		}
		fmt.Fprintf(b, "| %s | %s |", EscapeMarkdown(g.Model), EscapeMarkdown(g.Target))
		for _, site := range sites {
			cell := "–"
			if k := slices.IndexFunc(g.Sites, func(ss SiteScores) bool { return ss.Site == site }); k >= 0 {
				cell = fmt.Sprintf("%s (n %d)", formatNumber(g.Sites[k].Get(MetricPearson)), g.Sites[k].Participants)
			}
			fmt.Fprintf(b, " %s |", cell)
		}
		h := g.Heterogeneity
		fmt.Fprintf(b, " %s | %s (%d) | %s | %s |\n", formatNumber(h.SD), formatNumber(h.Q), h.DF, formatNumber(h.P), formatNumber(h.I2))
	}
	b.WriteString("\nPer site: Pearson r of the site's test predictions, all repeats and folds pooled; n counts the " +
		"site's participants. Heterogeneity across the sites with n ≥ 4: the SD of their r; Cochran's Q of their " +
		"Fisher z weighted by n − 3 (Cochran 1954), with its χ² p-value (small when the effect differs between " +
		"sites); I² = max(0, (Q − df)/Q), the share of the variation beyond sampling error (Higgins & Thompson 2002).\n")
}

// EtaSquared returns η² of a one-way analysis of variance of y on the
// groups of labels, the share of the variance of y that the groups
// explain:
//
//	η² = Σ_g n_g·(ȳ_g − ȳ)² / Σ_i (y_i − ȳ)²
//
// over the pairs where y is not NaN (Cohen 1988, section 8.2). It is NaN
// when fewer than two values are left or all are equal. The lengths of y
// and labels must be equal.
func EtaSquared(y []float64, labels []string) float64 {
	if len(y) != len(labels) {
		panic("eval: EtaSquared: length mismatch")
	}
	sum := make(map[string]float64)
	count := make(map[string]int)
	var total float64
	var n int
	for i, v := range y {
		if math.IsNaN(v) {
			continue
		}
		sum[labels[i]] += v
		count[labels[i]]++
		total += v
		n++
	}
	if n < 2 {
		return math.NaN()
	}
	mean := total / float64(n)
	var ssTotal, ssBetween float64
	for _, v := range y {
		if !math.IsNaN(v) {
			ssTotal += (v - mean) * (v - mean)
		}
	}
	for g, s := range sum {
		d := s/float64(count[g]) - mean
		ssBetween += float64(count[g]) * d * d
	}
	if ssTotal == 0 {
		return math.NaN()
	}
	return ssBetween / ssTotal
}

// siteJSON is the JSON form of a SiteScores: the site, its participants,
// then its scores.
type siteJSON struct {
	Site         string
	Participants int
	Scores       Scores
}

// MarshalJSON writes {"site", "participants", then the scores}.
func (s siteJSON) MarshalJSON() ([]byte, error) {
	var o jsonObject
	o.add("site", s.Site)
	o.add("participants", s.Participants)
	s.Scores.addTo(&o)
	return o.bytes()
}

// UnmarshalJSON reads what MarshalJSON writes.
func (s *siteJSON) UnmarshalJSON(b []byte) error {
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(b, &raw); err != nil {
		return err
	}
	s.Scores.NMIChance = math.NaN()
	sc := &s.Scores
	return sc.Values.fromRaw(raw, map[string]any{"site": &s.Site, "participants": &s.Participants,
		"n": &sc.N, "missing": &sc.Missing, "bins": &sc.Bins, "nmi_chance": &sc.NMIChance})
}

// jsonFloat is a float64 written as null when NaN and read back as NaN.
type jsonFloat float64

// MarshalJSON writes f, null for NaN.
func (f jsonFloat) MarshalJSON() ([]byte, error) { return []byte(formatJSONFloat(float64(f))), nil }

// UnmarshalJSON reads a number, or null as NaN.
func (f *jsonFloat) UnmarshalJSON(b []byte) error {
	var v *float64
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	*f = jsonFloat(math.NaN())
	if v != nil {
		*f = jsonFloat(*v)
	}
	return nil
}

// heteroJSON is the JSON form of a Heterogeneity.
type heteroJSON struct {
	Sites  int       `json:"sites"`
	SD     jsonFloat `json:"sd_r"`
	Q      jsonFloat `json:"q"`
	DF     int       `json:"df"`
	P      jsonFloat `json:"p"`
	I2     jsonFloat `json:"i2"`
	Pooled jsonFloat `json:"pooled_r"`
}
