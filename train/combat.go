package train

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// ComBatMethod chooses how ComBat estimates each site's location and
// scale of a feature: HarmonizeParametric or HarmonizeNonparametric.
type ComBatMethod string

// ComBat methods.
const (
	// HarmonizeParametric is the parametric empirical Bayes estimate:
	// normal prior on the site shifts, inverse-gamma prior on the site
	// variances (Johnson, Li & Rabinovic 2007, section 2.3).
	HarmonizeParametric ComBatMethod = "parametric"
	// HarmonizeNonparametric is the non-parametric empirical Bayes
	// estimate: each feature's shift and variance are the averages of the
	// other features' estimates, weighted by the likelihood of the
	// feature's data under them (Johnson, Li & Rabinovic 2007, section
	// 2.4). It costs O(G²) per site for G features.
	HarmonizeNonparametric ComBatMethod = "nonparametric"
)

// comBatConvergence is the relative change below which the parametric
// iteration stops: the value of Johnson, Li & Rabinovic's reference
// implementation (conv = 0.0001), kept so that the estimates agree with it.
const comBatConvergence = 1e-4

// ComBat holds ComBat estimates (Johnson, Li & Rabinovic 2007; for
// imaging features Fortin et al. 2017, 2018) fitted on training
// participants. Feature g of participant i at site b with preserved
// covariates x_i is modelled as
//
//	y_ig = α_g + x_i·β_g + γ_bg + δ_bg·ε_ig,  ε_ig ~ N(0, σ_g²),
//
// fitted by least squares on [one-hot site, x] (α_g is the average of the
// site intercepts weighted by site size, σ_g² the mean squared residual),
// with the site shift γ and scale δ² of the standardized data
// s_ig = (y_ig − α_g − x_i·β_g)/σ_g shrunk towards their averages across
// features by empirical Bayes (γ*, δ*², see ComBatMethod). Apply maps a
// participant to
//
//	y*_ig = σ_g·(s_ig − γ*_bg)/δ*_bg + α_g + x_i·β_g,
//
// removing the site's location and scale and keeping the covariates'
// effects. A feature constant within some training site is left out of
// the fit and the priors and left as it is by Apply, as the reference
// implementation does. Fields are exported for the JSON encoding of a
// fitted preparation step; treat them as read-only.
type ComBat struct {
	// Method is the estimate of the site effects.
	Method ComBatMethod `json:"method"`
	// Sites lists the training sites, sorted; index b of Shift and Scale.
	Sites []string `json:"sites"`
	// Count holds the training participants of each site.
	Count []int `json:"count"`
	// Mean holds α_g, one per feature.
	Mean []float64 `json:"mean"`
	// Coef holds β: one row per preserved covariate, one value per
	// feature; nil without covariates.
	Coef [][]float64 `json:"coef,omitempty"`
	// SD holds σ_g.
	SD []float64 `json:"sd"`
	// Shift holds γ*_bg and Scale δ*_bg² (a variance), a row per site.
	Shift [][]float64 `json:"shift"`
	Scale [][]float64 `json:"scale"`
	// Left lists the features left unharmonised (constant within a
	// training site), ascending.
	Left []int `json:"left,omitempty"`
}

// SiteError reports a site that ComBat cannot use: one with a single
// training participant, or one that Apply meets without having been
// fitted on it.
type SiteError struct {
	Site string
	Err  error
}

func (e *SiteError) Error() string { return fmt.Sprintf("site %q: %v", e.Site, e.Err) }

func (e *SiteError) Unwrap() error { return e.Err }

// ErrUnseenSite is wrapped by the SiteError of a participant whose site
// no training participant shares.
var ErrUnseenSite = errors.New("no training participant is from this site, so its effect cannot be estimated")

// FitComBat fits ComBat on y (n participants × G features), the site of
// each participant, and cov (n × C preserved covariates; nil for none).
// Every site needs at least two participants (else a *SiteError), y and
// cov must be finite, and [one-hot site, cov] must have full column
// rank (a covariate constant, or fixed by site, within the training
// participants is an error naming its column). The lengths of sites and
// the rows of y and cov must agree.
func FitComBat(y *mat.Dense, sites []string, cov *mat.Dense, method ComBatMethod) (*ComBat, error) {
	n, G := y.Dims()
	if len(sites) != n || cov != nil && cov.RawMatrix().Rows != n {
		panic("train: FitComBat: sites or covariates differ in length from y")
	}
	if method != HarmonizeParametric && method != HarmonizeNonparametric {
		return nil, fmt.Errorf("unknown ComBat method %q (want %q or %q)", method, HarmonizeParametric, HarmonizeNonparametric)
	}
	cb := &ComBat{Method: method, Sites: slices.Sorted(slices.Values(uniq(sites)))}
	B := len(cb.Sites)
	site := make([]int, n)
	cb.Count = make([]int, B)
	for i, s := range sites {
		site[i], _ = slices.BinarySearch(cb.Sites, s)
		cb.Count[site[i]]++
	}
	for b, c := range cb.Count {
		if c < 2 {
			return nil, &SiteError{Site: cb.Sites[b], Err: errors.New("one training participant: a site's effect needs at least two")}
		}
	}
	if B < 2 {
		return nil, fmt.Errorf("one site (%q): nothing to harmonise", cb.Sites[0])
	}
	C := 0
	if cov != nil {
		_, C = cov.Dims()
	}
	for i := 0; i < n; i++ {
		for _, v := range y.RawRowView(i) {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("participant %d: a feature is %v", i+1, v)
			}
		}
		for c := 0; c < C; c++ {
			if v := cov.At(i, c); math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("participant %d: covariate %d is %v", i+1, c+1, v)
			}
		}
	}

	// Features constant within a site are left out of everything.
	keep := make([]int, 0, G)
	mean := make([]float64, B*G)
	for i := 0; i < n; i++ {
		row, m := y.RawRowView(i), mean[site[i]*G:(site[i]+1)*G]
		for g, v := range row {
			m[g] += v
		}
	}
	for b := 0; b < B; b++ {
		for g := 0; g < G; g++ {
			mean[b*G+g] /= float64(cb.Count[b])
		}
	}
	varies := make([]bool, B*G)
	for i := 0; i < n; i++ {
		b := site[i]
		for g, v := range y.RawRowView(i) {
			if v != mean[b*G+g] {
				varies[b*G+g] = true
			}
		}
	}
	for g := 0; g < G; g++ {
		ok := true
		for b := 0; b < B; b++ {
			ok = ok && varies[b*G+g]
		}
		if ok {
			keep = append(keep, g)
		} else {
			cb.Left = append(cb.Left, g)
		}
	}
	K := len(keep)

	// Least squares on the design [one-hot site, cov].
	q := B + C
	design := mat.NewDense(n, q, nil)
	for i := 0; i < n; i++ {
		design.Set(i, site[i], 1)
		for c := 0; c < C; c++ {
			design.Set(i, B+c, cov.At(i, c))
		}
	}
	var gram mat.SymDense
	gram.SymOuterK(1, design.T())
	var chol mat.Cholesky
	if ok := chol.Factorize(&gram); !ok || chol.Cond() > 1e12 {
		return nil, errors.New("the preserved covariates are constant, or fixed by site, within the training participants: ComBat cannot tell their effects from the sites'")
	}
	yk := y // the kept features; y itself when every feature is kept
	if K < G {
		yk = mat.NewDense(n, max(K, 1), nil)
	}
	if K > 0 && K < G {
		for i := 0; i < n; i++ {
			row, out := y.RawRowView(i), yk.RawRowView(i)
			for k, g := range keep {
				out[k] = row[g]
			}
		}
	}
	var dty, coef mat.Dense
	dty.Mul(design.T(), yk)
	if err := chol.SolveTo(&coef, &dty); err != nil {
		return nil, fmt.Errorf("ComBat regression: %w", err)
	}

	cb.Mean, cb.SD = make([]float64, G), make([]float64, G)
	if C > 0 {
		cb.Coef = make([][]float64, C)
		for c := range cb.Coef {
			cb.Coef[c] = make([]float64, G)
		}
	}
	cb.Shift, cb.Scale = make([][]float64, B), make([][]float64, B)
	for b := range cb.Shift {
		cb.Shift[b], cb.Scale[b] = make([]float64, G), make([]float64, G)
		for _, g := range cb.Left {
			cb.Scale[b][g] = 1
		}
	}
	for _, g := range cb.Left {
		cb.SD[g] = 1
	}
	if K == 0 {
		return cb, nil
	}
	alpha := make([]float64, K)
	for b := 0; b < B; b++ {
		w := float64(cb.Count[b]) / float64(n)
		for k, v := range coef.RawRowView(b) {
			alpha[k] += w * v
		}
	}
	// σ² = mean squared residual; s = (y − α − xβ)/σ.
	variance := make([]float64, K)
	fit := make([]float64, K)
	for i := 0; i < n; i++ {
		yi := yk.RawRowView(i)
		copy(fit, coef.RawRowView(site[i]))
		for c := 0; c < C; c++ {
			x := cov.At(i, c)
			for k, v := range coef.RawRowView(B + c) {
				fit[k] += x * v
			}
		}
		for k, v := range yi {
			d := v - fit[k]
			variance[k] += d * d
		}
	}
	sd := make([]float64, K)
	for k := range variance {
		sd[k] = math.Sqrt(variance[k] / float64(n))
	}
	standardize := func(i int, out []float64) {
		copy(out, alpha)
		for c := 0; c < C; c++ {
			x := cov.At(i, c)
			for k, v := range coef.RawRowView(B + c) {
				out[k] += x * v
			}
		}
		for k, v := range yk.RawRowView(i) {
			out[k] = (v - out[k]) / sd[k]
		}
	}
	// Per site: mean (γ̂) and sum of squares about it of s.
	gammaHat := make([][]float64, B)
	ss := make([][]float64, B)
	for b := range gammaHat {
		gammaHat[b], ss[b] = make([]float64, K), make([]float64, K)
	}
	s := make([]float64, K)
	for i := 0; i < n; i++ {
		standardize(i, s)
		for k, v := range s {
			gammaHat[site[i]][k] += v
		}
	}
	for b := range gammaHat {
		for k := range gammaHat[b] {
			gammaHat[b][k] /= float64(cb.Count[b])
		}
	}
	for i := 0; i < n; i++ {
		standardize(i, s)
		g := gammaHat[site[i]]
		for k, v := range s {
			d := v - g[k]
			ss[site[i]][k] += d * d
		}
	}
	for b := 0; b < B; b++ {
		nb := float64(cb.Count[b])
		deltaHat := make([]float64, K)
		for k := range deltaHat {
			deltaHat[k] = ss[b][k] / (nb - 1)
		}
		var gStar, dStar []float64
		if method == HarmonizeParametric {
			gStar, dStar = comBatParametric(gammaHat[b], deltaHat, ss[b], nb)
		} else {
			gStar, dStar = comBatNonparametric(gammaHat[b], deltaHat, ss[b], nb)
		}
		for k, g := range keep {
			cb.Shift[b][g], cb.Scale[b][g] = gStar[k], dStar[k]
		}
	}
	for k, g := range keep {
		cb.Mean[g], cb.SD[g] = alpha[k], sd[k]
		for c := 0; c < C; c++ {
			cb.Coef[c][g] = coef.At(B+c, k)
		}
	}
	return cb, nil
}

// uniq returns the distinct values of s in order of first appearance.
func uniq(s []string) []string {
	var out []string
	seen := make(map[string]bool)
	for _, v := range s {
		if !seen[v] {
			seen[v] = true
			out = append(out, v)
		}
	}
	return out
}

// meanVar returns the mean and the sample variance (n − 1) of x.
func meanVar(x []float64) (mean, variance float64) {
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	for _, v := range x {
		variance += (v - mean) * (v - mean)
	}
	return mean, variance / float64(len(x)-1)
}

// comBatParametric returns the parametric empirical Bayes estimates γ*
// and δ*² of one site from the per-feature estimates gHat (mean of the
// standardized data) and dHat (their sample variance), the sums of
// squares ss about gHat and the site's size n. The priors are
// γ ~ N(γ̄, τ²) and δ² ~ InverseGamma(a, b), with γ̄, τ² the mean and
// variance of gHat across features and a, b matched to the mean m and
// variance v of dHat (a = (2v + m²)/v, b = (m·v + m³)/v); the posterior
// means are iterated to a fixed point,
//
//	γ* = (τ²·n·γ̂ + δ*²·γ̄)/(τ²·n + δ*²),
//	δ*² = (½·Σ_i (s_i − γ*)² + b)/(n/2 + a − 1),
//
// starting from γ̂, δ̂² and stopping once the largest relative change,
// taken as the reference implementation does (change divided by the old
// value, sign kept), is below 1e-4 (Johnson, Li & Rabinovic 2007,
// equations 2.3 and 2.4).
func comBatParametric(gHat, dHat, ss []float64, n float64) (gStar, dStar []float64) {
	gBar, t2 := meanVar(gHat)
	m, v := meanVar(dHat)
	a, b := (2*v+m*m)/v, (m*v+m*m*m)/v
	K := len(gHat)
	gOld, dOld := slices.Clone(gHat), slices.Clone(dHat)
	gNew, dNew := make([]float64, K), make([]float64, K)
	for change := 1.0; change > comBatConvergence; {
		change = math.Inf(-1)
		for k := range gHat {
			gNew[k] = (t2*n*gHat[k] + dOld[k]*gBar) / (t2*n + dOld[k])
			d := gHat[k] - gNew[k]
			sum2 := ss[k] + n*d*d
			dNew[k] = (0.5*sum2 + b) / (n/2 + a - 1)
			change = max(change, math.Abs(gNew[k]-gOld[k])/gOld[k], math.Abs(dNew[k]-dOld[k])/dOld[k])
		}
		gOld, gNew = gNew, gOld
		dOld, dNew = dNew, dOld
	}
	return gOld, dOld
}

// negligibleLog is the log-ratio to the largest weight below which a
// non-parametric weight is left out (comBatNonparametric).
const negligibleLog = -50

// comBatNonparametric returns the non-parametric empirical Bayes
// estimates of one site (arguments as comBatParametric): for feature k,
//
//	γ*_k = Σ_{j≠k} γ̂_j·L_kj / Σ_{j≠k} L_kj,  δ*²_k likewise with δ̂²_j,
//	L_kj = (2π·δ̂²_j)^(−n/2)·exp(−Σ_i (s_ik − γ̂_j)²/(2·δ̂²_j)),
//
// the likelihood of feature k's standardized data under feature j's
// estimates (Johnson, Li & Rabinovic 2007, section 2.4). The weights are
// summed in logarithms, scaled by the largest, which gives the same ratio
// without the underflow of the direct product for large n; a weight below
// e^−50 of the largest is left out (all of them together change the
// ratios by less than G·e^−50, 7e−18 at G = 35,000). Features are shared
// among the processors.
func comBatNonparametric(gHat, dHat, ss []float64, n float64) (gStar, dStar []float64) {
	K := len(gHat)
	gStar, dStar = make([]float64, K), make([]float64, K)
	logNorm := make([]float64, K)
	for j, d := range dHat {
		logNorm[j] = -n / 2 * math.Log(2*math.Pi*d)
	}
	workers := max(1, min(runtime.GOMAXPROCS(0), K))
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			logL := make([]float64, K)
			for k := w; k < K; k += workers {
				top := math.Inf(-1)
				for j := range gHat {
					if j == k {
						continue
					}
					d := gHat[k] - gHat[j]
					logL[j] = logNorm[j] - (ss[k]+n*d*d)/(2*dHat[j])
					top = max(top, logL[j])
				}
				var sum, sg, sd float64
				for j := range gHat {
					if j == k {
						continue
					}
					d := logL[j] - top
					if d < negligibleLog {
						continue
					}
					l := math.Exp(d)
					sum += l
					sg += gHat[j] * l
					sd += dHat[j] * l
				}
				gStar[k], dStar[k] = sg/sum, sd/sum
			}
		}()
	}
	wg.Wait()
	return gStar, dStar
}

// Apply returns y (n participants × G features, G as fitted) harmonised:
// row i by the estimates of site sites[i], with preserved covariates row
// i of cov (n × C as fitted; nil without covariates). A site the fit did
// not see is a *SiteError wrapping ErrUnseenSite, unless pooled is true:
// then that participant is harmonised with the size-weighted averages of
// the sites' estimates, Σ_b n_b·γ*_b / n and Σ_b n_b·δ*²_b / n. y is not
// modified.
func (cb *ComBat) Apply(y *mat.Dense, sites []string, cov *mat.Dense, pooled bool) (*mat.Dense, error) {
	n, G := y.Dims()
	if G != len(cb.Mean) {
		return nil, fmt.Errorf("%d features, ComBat was fitted on %d", G, len(cb.Mean))
	}
	if err := cb.check(G); err != nil {
		return nil, err
	}
	if len(sites) != n {
		panic("train: ComBat.Apply: sites differ in length from y")
	}
	C := len(cb.Coef)
	if C > 0 && (cov == nil || cov.RawMatrix().Rows != n || cov.RawMatrix().Cols != C) {
		return nil, fmt.Errorf("ComBat was fitted with %d preserved covariates; they are missing or misshapen", C)
	}
	left := make([]bool, G)
	for _, g := range cb.Left {
		left[g] = true
	}
	out := mat.DenseCopyOf(y)
	x := make([]float64, C)
	for i := 0; i < n; i++ {
		shift, scale, err := cb.site(sites[i], pooled)
		if err != nil {
			return nil, err
		}
		for c := range x {
			x[c] = cov.At(i, c)
		}
		row := out.RawRowView(i)
		for g, v := range row {
			if left[g] {
				continue
			}
			stand := cb.Mean[g]
			for c, xc := range x {
				stand += xc * cb.Coef[c][g]
			}
			s := (v - stand) / cb.SD[g]
			row[g] = cb.SD[g]*(s-shift[g])/math.Sqrt(scale[g]) + stand
		}
	}
	return out, nil
}

// check reports estimates that do not fit together or do not fit G
// features, such as those of a damaged saved file; the error names the
// field at fault.
func (cb *ComBat) check(G int) error {
	B := len(cb.Sites)
	switch {
	case len(cb.Mean) != G || len(cb.SD) != G:
		return fmt.Errorf("mean and sd hold %d and %d values, want one per feature (%d)", len(cb.Mean), len(cb.SD), G)
	case B == 0 || len(cb.Count) != B || len(cb.Shift) != B || len(cb.Scale) != B:
		return fmt.Errorf("%d sites with %d counts, %d shift rows and %d scale rows", B, len(cb.Count), len(cb.Shift), len(cb.Scale))
	case !slices.IsSorted(cb.Sites):
		return errors.New("sites are not sorted")
	}
	for b := range cb.Shift {
		if len(cb.Shift[b]) != G || len(cb.Scale[b]) != G {
			return fmt.Errorf("site %q: shift and scale hold %d and %d values, want %d", cb.Sites[b], len(cb.Shift[b]), len(cb.Scale[b]), G)
		}
		for g, v := range cb.Scale[b] {
			if !(v > 0) || math.IsInf(v, 0) {
				return fmt.Errorf("site %q: scale[%d] is %v, want a positive number", cb.Sites[b], g, v)
			}
		}
	}
	for c, row := range cb.Coef {
		if len(row) != G {
			return fmt.Errorf("coef row %d holds %d values, want %d", c, len(row), G)
		}
	}
	for _, g := range cb.Left {
		if g < 0 || g >= G {
			return fmt.Errorf("left: feature %d of %d", g, G)
		}
	}
	return nil
}

// site returns the estimates γ* and δ*² of site name, or with pooled the
// size-weighted averages over the sites when the fit did not see it.
func (cb *ComBat) site(name string, pooled bool) (shift, scale []float64, err error) {
	if b, found := slices.BinarySearch(cb.Sites, name); found {
		return cb.Shift[b], cb.Scale[b], nil
	}
	if !pooled {
		return nil, nil, &SiteError{Site: name, Err: ErrUnseenSite}
	}
	G := len(cb.Mean)
	shift, scale = make([]float64, G), make([]float64, G)
	var n float64
	for _, c := range cb.Count {
		n += float64(c)
	}
	for b, c := range cb.Count {
		w := float64(c) / n
		for g := range shift {
			shift[g] += w * cb.Shift[b][g]
			scale[g] += w * cb.Scale[b][g]
		}
	}
	return shift, scale, nil
}
