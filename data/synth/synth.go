// Package synth invents synthetic connectome cohorts with a known, planted
// brain–score relation, for tests, benchmarks and the demo.
//
// The scenario is fictional: the "Lakemoor Memory Panel", an invented
// study of adults who gave a resting-state scan, a diffusion scan and a
// battery of invented cognitive scores (recall, fluency, vigilance,
// planning, mood, sleep). No real study, participant or score is behind any
// number this package makes.
//
// Generative model, per participant i (all choices documented on Config):
//
//   - Structure. Regions sit in modules at random 3-D positions; a group
//     template decides which region pairs are joined (more often within a
//     module and between near regions). The participant's streamline count
//     on a template edge is Poisson with a mean that falls with distance,
//     times a log-normal factor per participant and edge (shared in part
//     within a family) and one per participant (its streamline yield);
//     weak tracts are sometimes missed (count 0), and pairs off the
//     template get a rare spurious streamline.
//   - Function. Regional time series of length TimePoints follow the
//     linear model x = (I − a S)^-1 e with S = D^-1/2 W D^-1/2 the
//     normalized structural weights W = ln(1 + counts), a = 0.7 and white
//     noise e, rescaled to unit variance per region; to this are added, per
//     target, a shared source on a region set A with variance
//     0.3·exp(+0.7 t) and one on a disjoint set B with variance
//     0.3·exp(−0.7 t), t the participant's latent trait for that target,
//     and, when Motion > 0, a global source whose variance grows with head
//     motion. The functional matrix is the sample correlation of these
//     series, given to 6 decimals, so it carries realistic sampling noise.
//   - Scores. The planted functional signal of a target is
//     Σ atanh F_jk over the edges within A (Positive) minus Σ atanh F_jk
//     over the edges within B (Negative), computed from the functional
//     matrices exactly as generated; optionally mixed with a structural
//     signal (Σ ln(1 + C_jk) over planted structural edges whose counts a
//     second trait raises, minus the same over edges it lowers). See
//     Planted for the score formula and its ceiling.
package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"

	"github.com/skein-neuro/skein/data"
)

// ScoreNames are the invented scores of the scenario, in the order targets
// are made: Config.Targets = 2 gives "recall" and "fluency".
var ScoreNames = []string{"recall", "fluency", "vigilance", "planning", "mood", "sleep"}

// scoreScale gives each invented score a plausible mean and SD.
var scoreScale = [][2]float64{{50, 10}, {40, 8}, {100, 15}, {20, 4}, {30, 6}, {7, 1.5}}

// CovariateNames are the covariates every synthetic cohort has, in
// Participant.Covariates order: age in years, sex coded F = 0 and M = 1
// (the coding skein's loader gives the text values "F" and "M") and head
// motion as mean framewise displacement in mm.
var CovariateNames = []string{"age", "sex", "motion"}

// Defaults of Config fields left at 0.
const (
	DefaultTargets    = 2
	DefaultCeiling    = 0.8
	DefaultTimePoints = 400
)

// Fixed parts of the generative model (see the package documentation).
const (
	coupling       = 0.7  // a of x = (I − a S)^-1 e
	sourceVariance = 0.3  // variance of the planted shared sources at t = 0
	traitEffect    = 0.7  // how strongly the trait scales a source's variance
	structEffect   = 0.5  // how strongly the structural trait scales counts
	familyShare    = 0.5  // correlation of traits, noise and edge factors within a family
	edgeVariation  = 0.3  // SD of the log-normal factor on each count
	yieldVariation = 0.2  // SD of the log-normal factor on all of a participant's counts
	spuriousCount  = 0.02 // mean count of a region pair off the template
	motionMedian   = 0.15 // median mean framewise displacement, mm
)

// Config chooses a synthetic cohort. The zero value of every field but N,
// P and Seed means "the default" or "off", as documented.
type Config struct {
	// N is the number of participants, at least 10.
	N int
	// P is the number of regions, at least 8.
	P int
	// Seed makes the cohort: the same Config gives the same cohort.
	Seed int64
	// Targets is the number of scores, 1 to len(ScoreNames); 0 means 2.
	Targets int
	// Ceiling is the population Pearson r between each target's planted
	// signal and its score, the best any model can reach: in (0, 1]; 0
	// means 0.8. The noise SD follows from it (see Planted). Not used when
	// Null is set.
	Ceiling float64
	// Null makes every score independent of the connectomes (apart from
	// the motion confound, when Motion > 0): for checking that a model
	// does not beat chance.
	Null bool
	// FamilySize, when 2 or more, puts consecutive participants in
	// families of that size (the last one may be smaller), with
	// Participant.Group "fam-001"... Within a family the latent traits,
	// the score noise and the structural edge factors have correlation
	// 0.5, so siblings share scores and connectomes beyond what the
	// planted signal explains. 0 or 1: unrelated participants.
	FamilySize int
	// Motion is the strength of the head-motion confound, 0 (default) for
	// none: a global source of variance Motion·0.5·(motion/0.15 mm) is
	// added to every region's series (raising all correlations) and
	// Motion times the standardized motion is added to each score.
	Motion float64
	// Missing is the fraction of scores left missing (NaN), each score
	// independently, in [0, 1); default 0.
	Missing float64
	// TimePoints is the length of the simulated regional time series, at
	// least 20; 0 means 400. Shorter series give noisier correlations.
	TimePoints int
	// StructuralShare is the share of each target's planted signal
	// variance that comes from structural edges, in [0, 1]; default 0 (all
	// functional).
	StructuralShare float64
	// Series keeps each participant's simulated T × p regional time
	// series in Cohort.Series, for Write to write them (ts/ folder) with
	// an experiment file that estimates the connectomes from them.
	Series bool
	// Couplings plants each target's functional signal in direct
	// couplings instead of shared sources: the regions of set A are
	// paired (first with second, third with fourth, …) and so are those of
	// set B, and the trait t adds +β·c(t) to the coupling of each A pair
	// in I − aS and −β·c(t) to each B pair's (β = 0.1, c(t) = t clipped
	// to [−2.5, 2.5], so I − aS stays invertible), with no trait-driven
	// sources. The trait then lives in the precision matrix (partial
	// correlations) of those pairs and reaches the full correlations only
	// mixed through the network. A global source of variance
	// exp(N(0, 1)) per participant, unrelated to the scores (a nuisance
	// such as a global physiological signal), is added to every region:
	// it moves every correlation, and partial correlations far less. The
	// planted signal s is the
	// standardized trait itself (Planted.Signal), not a function of the
	// correlations, and Planted.Positive and Negative are the A and B
	// pairs. Not with StructuralShare > 0.
	Couplings bool
	// Amplitudes plants each target's functional signal in the amplitude
	// of the regions' fluctuations instead of shared sources: after the
	// network, set A's series are multiplied by exp(+0.35·t) and set B's
	// by exp(−0.35·t), with no trait-driven sources. Every correlation
	// and partial correlation is blind to it (they do not change when a
	// series is scaled); covariances, and so tangent coordinates, carry
	// it. The planted signal s is the standardized trait itself
	// (Planted.Signal), and Planted.Positive and Negative are the edges
	// within A and within B. Not with Couplings or StructuralShare > 0.
	Amplitudes bool
	// Label, when not nil, adds a binary class label with a planted group
	// difference (see Label and AddLabel), drawn after everything else
	// from a random stream of its own: the rest of the cohort is the same
	// with or without it. nil: no label.
	Label *Label
}

// amplitudeEffect is the 0.35 of Config.Amplitudes.
const amplitudeEffect = 0.35

// couplingEffect is β of Config.Couplings.
const couplingEffect = 0.1

// Edge is a region pair, 0-based indices into Cohort.Regions with I < J.
type Edge struct{ I, J int }

// Planted is the truth about one target of a synthetic cohort.
//
// With f_i the functional signal Σ_{Positive} atanh F_ijk − Σ_{Negative}
// atanh F_ijk of participant i's raw functional matrix F_i and g_i the
// structural signal Σ_{StructuralPositive} ln(1 + C_ijk) −
// Σ_{StructuralNegative} ln(1 + C_ijk) of the raw counts C_i, the planted
// signal is
//
//	s = std(√(1 − StructuralShare)·std(f) + √StructuralShare·std(g))
//
// where std standardizes over the cohort (mean 0, SD 1). The score is
//
//	score = mean + sd·(s + MotionWeight·std(motion) + NoiseSD·ε) / √(1 + MotionWeight² + NoiseSD²),
//
// ε ~ N(0, 1) (without the s term and its 1 for a null target), with
// mean and SD set per score (recall: 50 and 10), rounded to 3 decimals, so
// that the Pearson r of s with the score is, in the population,
//
//	Ceiling = 1 / √(1 + MotionWeight² + NoiseSD²) = √(var s / (var s + var rest)).
//
// (The motion source lifts the A and B correlations alike and so nearly
// cancels in f; the formula treats s and motion as independent.) A null
// target has Ceiling 0, Signal nil and no edges.
type Planted struct {
	// Target is the score's name.
	Target string
	// Positive and Negative are the functional edges whose Fisher z adds
	// to and subtracts from the signal (the pairs within region sets A
	// and B of the package documentation).
	Positive, Negative []Edge
	// StructuralPositive and StructuralNegative are the structural edges
	// whose ln(1 + count) adds to and subtracts from the signal; empty
	// when StructuralShare is 0.
	StructuralPositive, StructuralNegative []Edge
	// StructuralShare is Config.StructuralShare.
	StructuralShare float64
	// Signal holds s for each participant, in Cohort.Participants order.
	Signal []float64
	// NoiseSD is the SD of the noise, in units of the SD of s.
	NoiseSD float64
	// MotionWeight is Config.Motion: the weight of standardized motion.
	MotionWeight float64
	// Ceiling is the population r of s with the score.
	Ceiling float64
}

// Cohort is a synthetic cohort: the participants with their RAW matrices
// (functional: correlations in [−1, 1] with a unit diagonal, given to 6
// decimals; structural: symmetric non-negative whole streamline counts with
// a zero diagonal), scores in their natural units with NaN where missing,
// covariates CovariateNames and region labels; and the truth.
type Cohort struct {
	*data.Cohort
	// Truth holds one Planted per target, in Targets order.
	Truth []Planted
	// Series holds each participant's T × p regional time series (a row
	// per time point), in Participants order, when Config.Series is set;
	// nil otherwise.
	Series []*mat.Dense
	// LabelTruth is the truth about the class label of Config.Label; nil
	// when the cohort has none.
	LabelTruth *PlantedLabel
}

// Grouped reports whether the participants are in families.
func (c *Cohort) Grouped() bool {
	return len(c.Participants) > 0 && c.Participants[0].Group != ""
}

func (cfg *Config) fill() error {
	if cfg.Targets == 0 {
		cfg.Targets = DefaultTargets
	}
	if cfg.Ceiling == 0 {
		cfg.Ceiling = DefaultCeiling
	}
	if cfg.TimePoints == 0 {
		cfg.TimePoints = DefaultTimePoints
	}
	bad := func(field string, value any, want string) error {
		return &ConfigError{Field: field, Value: value, Want: want}
	}
	switch {
	case cfg.N < 10:
		return bad("N", cfg.N, "at least 10 participants")
	case cfg.P < 8:
		return bad("P", cfg.P, "at least 8 regions")
	case cfg.Targets < 1 || cfg.Targets > len(ScoreNames):
		return bad("Targets", cfg.Targets, fmt.Sprintf("1 to %d scores", len(ScoreNames)))
	case !(cfg.Ceiling > 0 && cfg.Ceiling <= 1):
		return bad("Ceiling", cfg.Ceiling, "a correlation in (0, 1]")
	case cfg.FamilySize < 0:
		return bad("FamilySize", cfg.FamilySize, "0 or more")
	case !(cfg.Motion >= 0) || math.IsInf(cfg.Motion, 0):
		return bad("Motion", cfg.Motion, "0 or more")
	case !(cfg.Missing >= 0 && cfg.Missing < 1):
		return bad("Missing", cfg.Missing, "a fraction in [0, 1)")
	case cfg.TimePoints < 20:
		return bad("TimePoints", cfg.TimePoints, "at least 20 time points")
	case !(cfg.StructuralShare >= 0 && cfg.StructuralShare <= 1):
		return bad("StructuralShare", cfg.StructuralShare, "a fraction in [0, 1]")
	case cfg.Amplitudes && cfg.Couplings:
		return bad("Amplitudes", cfg.Amplitudes, "false with Couplings (one place for the signal)")
	case (cfg.Couplings || cfg.Amplitudes) && cfg.StructuralShare > 0:
		return bad("StructuralShare", cfg.StructuralShare, "0 with Couplings (the coupling signal is functional)")
	}
	if !cfg.Null && 1/(cfg.Ceiling*cfg.Ceiling)-1-cfg.Motion*cfg.Motion < 0 {
		return bad("Ceiling", cfg.Ceiling, fmt.Sprintf("at most %.4g: with Motion = %v the motion part of the scores limits the ceiling (it cannot be reached)",
			1/math.Sqrt(1+cfg.Motion*cfg.Motion), cfg.Motion))
	}
	return nil
}

// ConfigError is a Config field that Generate cannot work with.
type ConfigError struct {
	Field string // the Config field, such as "N"
	Value any    // its value
	Want  string // what would work
}

func (e *ConfigError) Error() string {
	return fmt.Sprintf("synth: %s = %v, want %s", e.Field, e.Value, e.Want)
}

// plan is the part of a cohort shared by all its participants.
type plan struct {
	cfg       Config
	regions   []string
	template  *mat.Dense // expected streamline counts of template edges, 0 elsewhere
	setA      [][]int    // per target, regions of the source whose variance rises with the trait
	setB      [][]int    // per target, regions of the source whose variance falls with it
	structPos [][]Edge   // per target, template edges whose counts rise with the structural trait
	structNeg [][]Edge
}

// Generate invents the cohort cfg describes.
func Generate(cfg Config) (*Cohort, error) {
	if err := cfg.fill(); err != nil {
		return nil, err
	}
	rng := rand.New(rand.NewPCG(uint64(cfg.Seed), 0x736b65696e)) // "skein"
	pl := newPlan(cfg, rng)
	n, nt := cfg.N, cfg.Targets

	idWidth := max(3, len(fmt.Sprint(n)))
	c := &data.Cohort{
		Targets:    slices.Clone(ScoreNames[:nt]),
		Covariates: slices.Clone(CovariateNames),
		Regions:    pl.regions,
	}

	// Latent traits, noise and family effects.
	family := make([]int, n)
	for i := range family {
		family[i] = i
		if cfg.FamilySize >= 2 {
			family[i] = i / cfg.FamilySize
		}
	}
	shared := func() func(i int) float64 { // a standard normal with correlation familyShare within a family
		famValue := map[int]float64{}
		return func(i int) float64 {
			if cfg.FamilySize < 2 {
				return rng.NormFloat64()
			}
			f, ok := famValue[family[i]]
			if !ok {
				f = rng.NormFloat64()
				famValue[family[i]] = f
			}
			return math.Sqrt(familyShare)*f + math.Sqrt(1-familyShare)*rng.NormFloat64()
		}
	}
	fcTrait := make([][]float64, nt)
	scTrait := make([][]float64, nt)
	noise := make([][]float64, nt)
	for k := range nt {
		fcTrait[k], scTrait[k], noise[k] = make([]float64, n), make([]float64, n), make([]float64, n)
		ft, st, nz := shared(), shared(), shared()
		for i := range n {
			fcTrait[k][i], scTrait[k][i], noise[k][i] = ft(i), st(i), nz(i)
		}
	}
	edgeFactor := familyEdgeFactors(cfg, family, rng)

	motion := make([]float64, n)
	var series []*mat.Dense
	for i := range n {
		age := math.Round((20+50*rng.Float64())*10) / 10
		sex := float64(rng.IntN(2))
		motion[i] = math.Round(motionMedian*math.Exp(0.5*rng.NormFloat64())*1e4) / 1e4
		part := &data.Participant{
			ID:         fmt.Sprintf("sub-%0*d", idWidth, i+1),
			Covariates: []float64{age, sex, motion[i]},
			Scores:     make([]float64, nt),
		}
		if cfg.FamilySize >= 2 {
			part.Group = fmt.Sprintf("fam-%03d", family[i]+1)
		}
		traits := make([]float64, nt)
		for k := range nt {
			traits[k] = scTrait[k][i]
		}
		part.Structural = pl.structural(traits, edgeFactor(i), rng)
		for k := range nt {
			traits[k] = fcTrait[k][i]
		}
		var x *mat.Dense
		part.Functional, x = pl.functional(part.Structural, traits, motion[i], rng)
		if cfg.Series {
			series = append(series, x)
		}
		c.Participants = append(c.Participants, part)
	}

	truth := make([]Planted, nt)
	motionZ := standardized(motion)
	for k := range nt {
		pt := Planted{Target: c.Targets[k], MotionWeight: cfg.Motion}
		var signal []float64
		if cfg.Null {
			pt.NoiseSD = 1
		} else {
			pt.Positive, pt.Negative = withinEdges(pl.setA[k]), withinEdges(pl.setB[k])
			pt.StructuralShare = cfg.StructuralShare
			if cfg.StructuralShare > 0 {
				pt.StructuralPositive, pt.StructuralNegative = pl.structPos[k], pl.structNeg[k]
			}
			switch {
			case cfg.Couplings:
				pt.Positive, pt.Negative = pairs(pl.setA[k]), pairs(pl.setB[k])
				signal = standardized(fcTrait[k])
			case cfg.Amplitudes:
				signal = standardized(fcTrait[k])
			default:
				signal = PlantedSignal(c.Participants, pt)
			}
			pt.Signal = signal
			pt.NoiseSD = math.Sqrt(1/(cfg.Ceiling*cfg.Ceiling) - 1 - cfg.Motion*cfg.Motion)
			pt.Ceiling = 1 / math.Sqrt(1+cfg.Motion*cfg.Motion+pt.NoiseSD*pt.NoiseSD)
		}
		mean, sd := scoreScale[k][0], scoreScale[k][1]
		variance := cfg.Motion*cfg.Motion + pt.NoiseSD*pt.NoiseSD // of y below, s aside
		if signal != nil {
			variance++
		}
		sd /= math.Sqrt(variance) // so that the scores have SD sd
		for i, part := range c.Participants {
			y := cfg.Motion*motionZ[i] + pt.NoiseSD*noise[k][i]
			if signal != nil {
				y += signal[i]
			}
			part.Scores[k] = math.Round((mean+sd*y)*1e3) / 1e3
		}
		truth[k] = pt
	}
	if cfg.Missing > 0 {
		for _, part := range c.Participants {
			for k := range part.Scores {
				if rng.Float64() < cfg.Missing {
					part.Scores[k] = math.NaN()
				}
			}
		}
	}
	out := &Cohort{Cohort: c, Truth: truth, Series: series}
	if cfg.Label != nil {
		if err := AddLabel(out, *cfg.Label, cfg.Seed); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// pairs returns the region pairs of Config.Couplings: the first region
// of the set with the second, the third with the fourth, and so on.
func pairs(regions []int) []Edge {
	var out []Edge
	for k := 0; k+1 < len(regions); k += 2 {
		out = append(out, Edge{regions[k], regions[k+1]})
	}
	return out
}

// PlantedSignal computes the planted signal s of Planted from the raw
// matrices of ps, standardized over ps (so on a subset of a cohort it is
// the subset's own standardization). Generate fills Planted.Signal with it.
func PlantedSignal(ps []*data.Participant, pt Planted) []float64 {
	n := len(ps)
	fcSig, scSig := make([]float64, n), make([]float64, n)
	for i, part := range ps {
		for _, e := range pt.Positive {
			fcSig[i] += math.Atanh(part.Functional.At(e.I, e.J))
		}
		for _, e := range pt.Negative {
			fcSig[i] -= math.Atanh(part.Functional.At(e.I, e.J))
		}
		for _, e := range pt.StructuralPositive {
			scSig[i] += math.Log1p(part.Structural.At(e.I, e.J))
		}
		for _, e := range pt.StructuralNegative {
			scSig[i] -= math.Log1p(part.Structural.At(e.I, e.J))
		}
	}
	mix := standardized(fcSig)
	if pt.StructuralShare > 0 {
		scZ := standardized(scSig)
		for i := range mix {
			mix[i] = math.Sqrt(1-pt.StructuralShare)*mix[i] + math.Sqrt(pt.StructuralShare)*scZ[i]
		}
	}
	return standardized(mix)
}

// standardized returns (x − mean) / SD (the n − 1 SD), or x − mean when the
// SD is 0.
func standardized(x []float64) []float64 {
	mean, sd := stat.MeanStdDev(x, nil)
	out := make([]float64, len(x))
	for i, v := range x {
		out[i] = v - mean
		if sd > 0 {
			out[i] /= sd
		}
	}
	return out
}

func withinEdges(regions []int) []Edge {
	var edges []Edge
	for a, i := range regions {
		for _, j := range regions[a+1:] {
			edges = append(edges, Edge{min(i, j), max(i, j)})
		}
	}
	return edges
}

func newPlan(cfg Config, rng *rand.Rand) *plan {
	p := cfg.P
	modules := max(2, int(math.Round(float64(p)/8)))
	type point [3]float64
	centres := make([]point, modules)
	for m := range centres {
		for d := range 3 {
			centres[m][d] = rng.Float64()
		}
	}
	module := make([]int, p)
	pos := make([]point, p)
	regions := make([]string, p)
	perModule := make([]int, modules)
	for i := range p {
		m := i * modules / p
		module[i] = m
		for d := range 3 {
			pos[i][d] = centres[m][d] + 0.08*rng.NormFloat64()
		}
		perModule[m]++
		regions[i] = fmt.Sprintf("mod%d_%02d", m+1, perModule[m])
	}
	template := mat.NewDense(p, p, nil)
	var templateEdges []Edge
	for i := range p {
		for j := i + 1; j < p; j++ {
			var d2 float64
			for k := range 3 {
				d2 += (pos[i][k] - pos[j][k]) * (pos[i][k] - pos[j][k])
			}
			d := math.Sqrt(d2)
			prob, mean := 0.9*math.Exp(-d/0.35), 2000*math.Exp(-d/0.15)
			if module[i] == module[j] {
				mean *= 2
			} else {
				prob *= 0.4
			}
			if rng.Float64() < prob {
				mean = math.Max(mean, 0.5) // weak tracts are sometimes missed
				template.Set(i, j, mean)
				template.Set(j, i, mean)
				templateEdges = append(templateEdges, Edge{i, j})
			}
		}
	}
	pl := &plan{cfg: cfg, regions: regions, template: template}
	setSize := max(3, p/8)
	structSize := max(2, len(templateEdges)/20)
	for range cfg.Targets {
		order := rng.Perm(p)
		pl.setA = append(pl.setA, sorted(order[:setSize]))
		pl.setB = append(pl.setB, sorted(order[setSize:2*setSize]))
		edgeOrder := rng.Perm(len(templateEdges))
		var pos, neg []Edge
		for n, e := range edgeOrder[:min(2*structSize, len(edgeOrder))] {
			if n%2 == 0 {
				pos = append(pos, templateEdges[e])
			} else {
				neg = append(neg, templateEdges[e])
			}
		}
		pl.structPos = append(pl.structPos, sortedEdges(pos))
		pl.structNeg = append(pl.structNeg, sortedEdges(neg))
	}
	return pl
}

func sorted(x []int) []int {
	x = slices.Clone(x)
	slices.Sort(x)
	return x
}

func sortedEdges(e []Edge) []Edge {
	slices.SortFunc(e, func(a, b Edge) int {
		if a.I != b.I {
			return a.I - b.I
		}
		return a.J - b.J
	})
	return e
}

// familyEdgeFactors returns, for participant i, the standard normal
// log-factor of each region pair (p × p, symmetric), correlated
// familyShare within a family.
func familyEdgeFactors(cfg Config, family []int, rng *rand.Rand) func(i int) *mat.Dense {
	p := cfg.P
	famFactor := map[int]*mat.Dense{}
	draw := func() *mat.Dense {
		m := mat.NewDense(p, p, nil)
		for a := range p {
			for b := a + 1; b < p; b++ {
				v := rng.NormFloat64()
				m.Set(a, b, v)
				m.Set(b, a, v)
			}
		}
		return m
	}
	return func(i int) *mat.Dense {
		own := draw()
		if cfg.FamilySize < 2 {
			return own
		}
		f, ok := famFactor[family[i]]
		if !ok {
			f = draw()
			famFactor[family[i]] = f
		}
		own.Scale(math.Sqrt(1-familyShare), own)
		own.Add(own, scaled(math.Sqrt(familyShare), f))
		return own
	}
}

func scaled(s float64, m *mat.Dense) *mat.Dense {
	var out mat.Dense
	out.Scale(s, m)
	return &out
}

// structural draws one participant's streamline counts.
func (pl *plan) structural(traits []float64, factor *mat.Dense, rng *rand.Rand) *mat.Dense {
	p := pl.cfg.P
	mean := mat.DenseCopyOf(pl.template)
	for k, t := range traits {
		for _, e := range pl.structPos[k] {
			mean.Set(e.I, e.J, mean.At(e.I, e.J)*math.Exp(structEffect*t))
		}
		for _, e := range pl.structNeg[k] {
			mean.Set(e.I, e.J, mean.At(e.I, e.J)*math.Exp(-structEffect*t))
		}
	}
	// The participant's overall streamline yield varies too.
	yield := math.Exp(yieldVariation*rng.NormFloat64() - yieldVariation*yieldVariation/2)
	counts := mat.NewDense(p, p, nil)
	for i := range p {
		for j := i + 1; j < p; j++ {
			lambda := yield * mean.At(i, j)
			if lambda == 0 {
				lambda = spuriousCount // false-positive streamlines off the template
			}
			lambda *= math.Exp(edgeVariation*factor.At(i, j) - edgeVariation*edgeVariation/2)
			c := distuv.Poisson{Lambda: lambda, Src: rng}.Rand()
			counts.Set(i, j, c)
			counts.Set(j, i, c)
		}
	}
	return counts
}

// functional simulates one participant's regional time series on the
// structural counts and returns their correlation matrix, to 6 decimals.
func (pl *plan) functional(counts *mat.Dense, traits []float64, motion float64, rng *rand.Rand) (*mat.Dense, *mat.Dense) {
	p, T := pl.cfg.P, pl.cfg.TimePoints
	w := mat.NewDense(p, p, nil)
	w.Apply(func(_, _ int, v float64) float64 { return math.Log1p(v) }, counts)
	deg := make([]float64, p)
	for i := range p {
		deg[i] = mat.Sum(w.RowView(i))
	}
	// system = I − a D^-1/2 W D^-1/2; mix = system^-1, rows scaled so that
	// mix·mixᵀ has a unit diagonal.
	system := mat.NewDense(p, p, nil)
	system.Apply(func(i, j int, v float64) float64 {
		var s float64
		if deg[i] > 0 && deg[j] > 0 {
			s = v / math.Sqrt(deg[i]*deg[j])
		}
		if i == j {
			return 1 - coupling*s
		}
		return -coupling * s
	}, w)
	if pl.cfg.Couplings {
		for k, t := range traits {
			c := couplingEffect * math.Max(-2.5, math.Min(2.5, t))
			for _, e := range pairs(pl.setA[k]) {
				system.Set(e.I, e.J, system.At(e.I, e.J)-c)
				system.Set(e.J, e.I, system.At(e.J, e.I)-c)
			}
			for _, e := range pairs(pl.setB[k]) {
				system.Set(e.I, e.J, system.At(e.I, e.J)+c)
				system.Set(e.J, e.I, system.At(e.J, e.I)+c)
			}
		}
	}
	var mix mat.Dense
	if err := mix.Inverse(system); err != nil {
		panic(fmt.Sprintf("synth: I − aS is singular: %v", err)) // cannot happen: the spectral radius of S is at most 1
	}
	for i := range p {
		row := mix.RawRowView(i)
		norm := floats.Norm(row, 2)
		for j := range row {
			row[j] /= norm
		}
	}
	e := mat.NewDense(T, p, nil)
	for i := range e.RawMatrix().Data {
		e.RawMatrix().Data[i] = rng.NormFloat64()
	}
	var x mat.Dense
	x.Mul(e, mix.T())
	addSource := func(regions []int, variance float64) {
		amp := math.Sqrt(variance)
		for t := range T {
			v := amp * rng.NormFloat64()
			for _, r := range regions {
				x.Set(t, r, x.At(t, r)+v)
			}
		}
	}
	if pl.cfg.Amplitudes {
		for k, t := range traits {
			for _, set := range []struct {
				regions []int
				sign    float64
			}{{pl.setA[k], 1}, {pl.setB[k], -1}} {
				f := math.Exp(set.sign * amplitudeEffect * t)
				for _, r := range set.regions {
					for tp := range T {
						x.Set(tp, r, f*x.At(tp, r))
					}
				}
			}
		}
	} else if pl.cfg.Couplings {
		all := make([]int, p)
		for i := range all {
			all[i] = i
		}
		addSource(all, 4*math.Exp(rng.NormFloat64()))
	} else {
		for k, t := range traits {
			addSource(pl.setA[k], sourceVariance*math.Exp(traitEffect*t))
			addSource(pl.setB[k], sourceVariance*math.Exp(-traitEffect*t))
		}
	}
	if pl.cfg.Motion > 0 {
		all := make([]int, p)
		for i := range all {
			all[i] = i
		}
		addSource(all, pl.cfg.Motion*0.5*motion/motionMedian)
	}
	var corr mat.SymDense
	stat.CorrelationMatrix(&corr, &x, nil)
	fc := mat.NewDense(p, p, nil)
	for i := range p {
		for j := range p {
			v := 1.0
			if i != j {
				v = math.Round(corr.At(i, j)*1e6) / 1e6
			}
			fc.Set(i, j, v)
		}
	}
	return fc, &x
}

// Preprocess applies pre (its defaults filled in) to every participant's
// matrices in place, as loading the written files with an experiment file
// would: the cohort is then ready for a train.Runner. The error names the
// first participant whose matrix failed.
func (c *Cohort) Preprocess(pre data.Preprocess) error {
	pre.SetDefaults()
	if err := pre.Validate(); err != nil {
		return err
	}
	for _, p := range c.Participants {
		if err := pre.Functional(p.Functional); err != nil {
			return fmt.Errorf("synth: participant %s: functional: %w", p.ID, err)
		}
		if err := pre.Structural(p.Structural); err != nil {
			return fmt.Errorf("synth: participant %s: structural: %w", p.ID, err)
		}
	}
	return nil
}
