// Package scenario generates invented cohorts whose score follows a known
// truth, for the scenario benchmark (bench/cmd/scenarios): a score linear
// in functional edges, linear in structural edges, linear in a propagated
// matrix S·F·Sᵀ, driven by node-wise structure–function coupling, driven
// by products of functional and structural edges inside a block of
// regions, or independent of the connectomes (Kinds).
//
// The generator is written for this benchmark alone; it shares no model
// with data/synth. Every participant gets
//
//   - a structural matrix: streamline-like counts, symmetric, zero on the
//     diagonal, dense inside the modules of a fixed template and sparse
//     between them, each count the template's mean times a participant
//     factor times edge noise (log-normal), rounded; stored as log1p(count);
//   - a functional matrix: T time points of p regional signals
//     x = A·(L·f + u), with f the K module factors plus a global one, L the
//     participant's loadings (each region on its own module, on the global
//     factor, and weakly on a neighbouring module), u independent region
//     noise and A = I + γ·Â the spread along the participant's structural
//     graph (Â the symmetrically normalized structural matrix,
//     D^(−1/2)·S·D^(−1/2)); the sample correlation of the columns (a valid
//     correlation matrix: symmetric, unit diagonal, positive semidefinite
//     when T > p) is stored as Fisher z, atanh(r), with a zero diagonal.
//
// The score is computed from the matrices exactly as stored: the
// noiseless score g (one of Kinds) is standardized over the cohort and the
// observed score is 50 + 10·(ρ·g + sqrt(1 − ρ²)·e), e standard normal, so
// that the correlation between the noiseless and the observed score, the
// oracle r, is ρ in expectation and the score's SD is 10 whatever ρ. For
// the null truth g = 0 and the oracle r is 0.
//
// The truth is drawn after the connectomes: cohorts of every kind made
// with the same Config hold the same matrices and differ in the score
// only.
//
// skein is research software, not a diagnostic device.
package scenario

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/data"
)

// Kind names one truth of the score.
type Kind string

// The truths of the score. TruthEdges edges or TruthRegions regions carry
// the signal; their weights are drawn from the seed.
const (
	// FCLinear: g = Σₑ wₑ·Fₑ over the edges of a subnetwork of five regions
	// spanning two modules (ten edges), F the Fisher z functional matrix.
	FCLinear Kind = "fc-linear"
	// SCLinear: g = Σₑ wₑ·Sₑ over ten edges of the structural template,
	// S the log1p structural matrix.
	SCLinear Kind = "sc-linear"
	// Propagated: g = Σₑ wₑ·Pₑ over ten edges of P = Â·F·Âᵀ, with
	// Â = D^(−1/2)·(S + I)·D^(−1/2) the renormalized structural adjacency
	// (D the row sums of S + I).
	Propagated Kind = "propagated"
	// Coupling: g = Σᵣ wᵣ·cᵣ over four regions r, cᵣ the Pearson
	// correlation between row r of F and row r of S over the other p − 1
	// regions (node-wise structure–function coupling).
	Coupling Kind = "coupling"
	// Product: g = Σ_{i<j∈B} zF_ij·zS_ij over a block B of six regions of
	// one module, zF and zS each edge standardized by its cohort mean and
	// SD: an interaction with no linear part, so linear models in the edges
	// should stay near chance.
	Product Kind = "product"
	// Null: g = 0; the score is noise, independent of the connectomes.
	Null Kind = "null"
)

// Kinds lists every truth, in the order the benchmark runs them.
var Kinds = []Kind{FCLinear, SCLinear, Propagated, Coupling, Product, Null}

// Config sizes a generated cohort.
type Config struct {
	// N participants and P regions; N ≥ 20, P ≥ 12.
	N, P int
	// T is the number of time points of each regional signal; 0 means
	// max(200, 3·P). It must exceed P.
	T int
	// Oracle is ρ, the expected correlation between the noiseless and the
	// observed score, in (0, 1]; 0 means 0.6. Ignored by Null.
	Oracle float64
	// Seed drives every random draw: the template, the participants, the
	// truth's edges and weights and the noise.
	Seed uint64
}

// Scenario is one generated cohort and its truth.
type Scenario struct {
	Kind Kind
	// Cohort holds N participants with functional and structural
	// matrices, one target "score", no covariates and no groups.
	Cohort *data.Cohort
	// Noiseless holds g per participant, standardized over the cohort
	// (all zero for Null), in cohort order.
	Noiseless []float64
	// Oracle is the generator's oracle r, ρ (0 for Null).
	Oracle float64
}

// Generate makes the cohort of kind k sized by cfg.
func Generate(k Kind, cfg Config) (*Scenario, error) {
	if !slices.Contains(Kinds, k) {
		return nil, fmt.Errorf("scenario: unknown kind %q (want one of %v)", k, Kinds)
	}
	if cfg.N < 20 || cfg.P < 12 {
		return nil, fmt.Errorf("scenario: need N ≥ 20 and P ≥ 12, found N = %d, P = %d", cfg.N, cfg.P)
	}
	if cfg.T == 0 {
		cfg.T = max(200, 3*cfg.P)
	}
	if cfg.T <= cfg.P {
		return nil, fmt.Errorf("scenario: T = %d time points must exceed P = %d", cfg.T, cfg.P)
	}
	if cfg.Oracle == 0 {
		cfg.Oracle = 0.6
	}
	if !(cfg.Oracle > 0 && cfg.Oracle <= 1) {
		return nil, fmt.Errorf("scenario: oracle r must be in (0, 1], found %g", cfg.Oracle)
	}
	rng := rand.New(rand.NewPCG(cfg.Seed, 0x5ce7a1))
	tpl := newTemplate(cfg.P, rng)
	c := &data.Cohort{Targets: []string{"score"}}
	for r := range cfg.P {
		c.Regions = append(c.Regions, fmt.Sprintf("m%d-r%02d", tpl.module[r]+1, r+1))
	}
	for i := range cfg.N {
		s := tpl.structural(rng)
		f := tpl.functional(s, cfg.T, rng)
		c.Participants = append(c.Participants, &data.Participant{
			ID: fmt.Sprintf("sub-%04d", i+1), Functional: f, Structural: s,
			Scores: []float64{math.NaN()},
		})
	}
	g, err := truth(k, c, tpl, rng)
	if err != nil {
		return nil, err
	}
	sc := &Scenario{Kind: k, Cohort: c, Noiseless: g}
	if k != Null {
		sc.Oracle = cfg.Oracle
	}
	noise := math.Sqrt(1 - sc.Oracle*sc.Oracle)
	for i, p := range c.Participants {
		p.Scores[0] = 50 + 10*(sc.Oracle*g[i]+noise*rng.NormFloat64())
	}
	return sc, nil
}

// template is what every participant of a cohort shares.
type template struct {
	p, k   int
	module []int // module of each region, 0..k−1, contiguous
	// present marks the edges of the structural template; mean holds the
	// mean count of each present edge.
	present []bool
	mean    []float64
	// base is each region's loading on its own module's factor.
	base []float64
}

func newTemplate(p int, rng *rand.Rand) *template {
	k := max(3, p/10)
	t := &template{p: p, k: k, module: make([]int, p), present: make([]bool, p*p), mean: make([]float64, p*p), base: make([]float64, p)}
	for r := range p {
		t.module[r] = r * k / p
		t.base[r] = 0.5 + 0.4*rng.Float64()
	}
	for i := range p {
		for j := i + 1; j < p; j++ {
			prob, mu := 0.3, math.Log(15)
			if t.module[i] == t.module[j] {
				prob, mu = 0.95, math.Log(150)
			}
			if rng.Float64() < prob {
				m := math.Exp(mu + 0.8*rng.NormFloat64())
				t.present[i*p+j], t.present[j*p+i] = true, true
				t.mean[i*p+j], t.mean[j*p+i] = m, m
			}
		}
	}
	return t
}

// structural draws one participant's log1p streamline counts.
func (t *template) structural(rng *rand.Rand) *mat.Dense {
	p := t.p
	s := mat.NewDense(p, p, nil)
	scale := math.Exp(0.2 * rng.NormFloat64()) // the participant's overall count
	for i := range p {
		for j := i + 1; j < p; j++ {
			var count float64
			switch {
			case t.present[i*p+j]:
				count = math.Round(t.mean[i*p+j] * scale * math.Exp(0.45*rng.NormFloat64()))
			case rng.Float64() < 0.05: // a spurious streamline or two
				count = float64(1 + rng.IntN(3))
			}
			v := math.Log1p(count)
			s.Set(i, j, v)
			s.Set(j, i, v)
		}
	}
	return s
}

// normalizedAdjacency returns D^(−1/2)·(S + selfLoop·I)·D^(−1/2), D the row
// sums of S + selfLoop·I (a row summing to 0 is left at 0).
func normalizedAdjacency(s *mat.Dense, selfLoop float64) *mat.Dense {
	p, _ := s.Dims()
	a := mat.DenseCopyOf(s)
	d := make([]float64, p)
	for i := range p {
		a.Set(i, i, a.At(i, i)+selfLoop)
		d[i] = floats.Sum(a.RawRowView(i))
		if d[i] > 0 {
			d[i] = 1 / math.Sqrt(d[i])
		}
	}
	for i := range p {
		for j := range p {
			a.Set(i, j, d[i]*a.At(i, j)*d[j])
		}
	}
	return a
}

// functional draws one participant's regional signals over T time points,
// spread along the structural matrix s, and returns the Fisher z of their
// correlation matrix with a zero diagonal.
func (t *template) functional(s *mat.Dense, T int, rng *rand.Rand) *mat.Dense {
	p, k := t.p, t.k
	const gamma = 0.5
	// Loadings: p × (k+1), the last column the global factor.
	l := mat.NewDense(p, k+1, nil)
	globalW := 0.3 + 0.1*rng.NormFloat64()
	for r := range p {
		m := t.module[r]
		l.Set(r, m, t.base[r]+0.25*rng.NormFloat64())
		l.Set(r, (m+1)%k, 0.2*rng.NormFloat64())
		l.Set(r, k, globalW+0.1*rng.NormFloat64())
	}
	f := mat.NewDense(T, k+1, nil)
	for i := range T {
		for j := range k + 1 {
			f.Set(i, j, rng.NormFloat64())
		}
	}
	x := mat.NewDense(T, p, nil)
	x.Mul(f, l.T())
	for i := range T {
		row := x.RawRowView(i)
		for j := range row {
			row[j] += rng.NormFloat64()
		}
	}
	a := normalizedAdjacency(s, 0) // A = I + γ·Â
	a.Scale(gamma, a)
	for i := range p {
		a.Set(i, i, a.At(i, i)+1)
	}
	var y mat.Dense
	y.Mul(x, a)
	var corr mat.SymDense
	stat.CorrelationMatrix(&corr, &y, nil)
	z := mat.NewDense(p, p, nil)
	for i := range p {
		for j := i + 1; j < p; j++ {
			r := math.Max(-1+1e-12, math.Min(1-1e-12, corr.At(i, j)))
			v := math.Atanh(r)
			z.Set(i, j, v)
			z.Set(j, i, v)
		}
	}
	return z
}

// truth draws the edges or regions and the weights of kind k and returns
// the standardized noiseless score of every participant of c.
func truth(k Kind, c *data.Cohort, t *template, rng *rand.Rand) ([]float64, error) {
	n, p := len(c.Participants), t.p
	g := make([]float64, n)
	if k == Null {
		return g, nil
	}
	weight := func() float64 { // ±(0.5 to 1.5)
		w := 0.5 + rng.Float64()
		if rng.IntN(2) == 0 {
			w = -w
		}
		return w
	}
	type edge struct {
		i, j int
		w    float64
	}
	randomEdges := func(count int, ok func(i, j int) bool) []edge {
		var es []edge
		for len(es) < count {
			i, j := rng.IntN(p), rng.IntN(p)
			if i >= j || !ok(i, j) || slices.ContainsFunc(es, func(e edge) bool { return e.i == i && e.j == j }) {
				continue
			}
			es = append(es, edge{i, j, weight()})
		}
		return es
	}
	sumEdges := func(es []edge, m func(x *data.Participant) *mat.Dense) {
		for x, part := range c.Participants {
			a := m(part)
			for _, e := range es {
				g[x] += e.w * a.At(e.i, e.j)
			}
		}
	}
	moduleRegions := func(m int) []int {
		var rs []int
		for r := range p {
			if t.module[r] == m {
				rs = append(rs, r)
			}
		}
		return rs
	}
	switch k {
	case FCLinear:
		// Three regions of module 1 and two of module 2.
		m1, m2 := moduleRegions(0), moduleRegions(1)
		rng.Shuffle(len(m1), func(i, j int) { m1[i], m1[j] = m1[j], m1[i] })
		rng.Shuffle(len(m2), func(i, j int) { m2[i], m2[j] = m2[j], m2[i] })
		rs := append(slices.Clone(m1[:3]), m2[:2]...)
		var es []edge
		for a := range rs {
			for b := a + 1; b < len(rs); b++ {
				es = append(es, edge{min(rs[a], rs[b]), max(rs[a], rs[b]), weight()})
			}
		}
		sumEdges(es, func(x *data.Participant) *mat.Dense { return x.Functional })
	case SCLinear:
		es := randomEdges(10, func(i, j int) bool { return t.present[i*p+j] })
		sumEdges(es, func(x *data.Participant) *mat.Dense { return x.Structural })
	case Propagated:
		es := randomEdges(10, func(i, j int) bool { return true })
		sumEdges(es, func(x *data.Participant) *mat.Dense {
			a := normalizedAdjacency(x.Structural, 1)
			var prop mat.Dense
			prop.Product(a, x.Functional, a.T())
			return &prop
		})
	case Coupling:
		rs := rng.Perm(p)[:4]
		ws := []float64{weight(), weight(), weight(), weight()}
		fr, sr := make([]float64, 0, p-1), make([]float64, 0, p-1)
		for x, part := range c.Participants {
			for a, r := range rs {
				fr, sr = fr[:0], sr[:0]
				for j := range p {
					if j != r {
						fr = append(fr, part.Functional.At(r, j))
						sr = append(sr, part.Structural.At(r, j))
					}
				}
				g[x] += ws[a] * stat.Correlation(fr, sr, nil)
			}
		}
	case Product:
		rs := moduleRegions(rng.IntN(t.k))
		rng.Shuffle(len(rs), func(i, j int) { rs[i], rs[j] = rs[j], rs[i] })
		rs = rs[:min(6, len(rs))]
		fv, sv := make([]float64, n), make([]float64, n)
		for a := range rs {
			for b := a + 1; b < len(rs); b++ {
				for x, part := range c.Participants {
					fv[x] = part.Functional.At(rs[a], rs[b])
					sv[x] = part.Structural.At(rs[a], rs[b])
				}
				fm, fs := stat.MeanStdDev(fv, nil)
				sm, ss := stat.MeanStdDev(sv, nil)
				if fs == 0 || ss == 0 {
					continue
				}
				for x := range g {
					g[x] += (fv[x] - fm) / fs * (sv[x] - sm) / ss
				}
			}
		}
	}
	m, sd := stat.MeanStdDev(g, nil)
	if !(sd > 0) {
		return nil, errors.New("scenario: the noiseless score is constant over the cohort; raise N or P")
	}
	for i := range g {
		g[i] = (g[i] - m) / sd
	}
	return g, nil
}
