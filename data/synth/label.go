package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/stat/distuv"
)

// LabelClasses are the classes of a synthetic label, in class order: the
// second, "patient", is the positive class.
var LabelClasses = []string{"control", "patient"}

// Defaults of Label fields left at 0.
const (
	DefaultPrevalence = 0.3
	DefaultLabelAUC   = 0.8
)

// Label asks for a binary class label (a diagnosis) with a planted group
// difference, drawn from a cohort's connectomes after everything else, so
// that adding it changes no other column, matrix or score.
//
// Generative model (a liability-threshold model): region sets A and B of
// max(3, p/8) regions each are drawn, d is the standardized functional
// signal Σ_{A pairs} atanh F − Σ_{B pairs} atanh F of each participant (as
// PlantedSignal computes it), and the liability is
//
//	L = ρ·d + √(1 − ρ²)·ε,  ε ~ N(0, 1)
//
// (ε correlated 0.5 within a family, as the scores' noise is). The
// round(Prevalence·N) participants of highest liability are "patient",
// the others "control": patients have a higher d, that is stronger
// connectivity within A and weaker within B. ρ is chosen so that the
// population ROC AUC of d, the best any classifier can reach (the oracle:
// P(patient | d) rises with d), is AUC (LabelOracleAUC).
type Label struct {
	// Name is the label's column name, such as "diagnosis".
	Name string
	// Prevalence is the share of patients, in (0, 1); 0 means 0.3.
	Prevalence float64
	// AUC is the oracle ROC AUC, in (0.5, 1); 0 means 0.8. Not used
	// when Null is set.
	AUC float64
	// Null makes the label independent of the connectomes (ρ = 0, oracle
	// AUC 0.5): for checking that a classifier does not beat chance.
	Null bool
}

// PlantedLabel is the truth about a synthetic label.
type PlantedLabel struct {
	// Label is the column name.
	Label string
	// Positive and Negative are the functional edges of sets A and B;
	// empty for a null label.
	Positive, Negative []Edge
	// Signal holds d for each participant, in Participants order; nil
	// for a null label.
	Signal []float64
	// Effect is ρ, the correlation of d with the liability.
	Effect float64
	// Prevalence is the share of patients asked for.
	Prevalence float64
	// AUC is the oracle ROC AUC of d in the population, LabelOracleAUC(ρ,
	// Prevalence); 0.5 for a null label.
	AUC float64
}

// AddLabel draws the label l (see Label) for the cohort c and records it
// in c.Labels, c.Classes, each Participant.Labels and c.LabelTruth. Its
// random choices come from a stream of its own seeded by seed, so the
// rest of c is unchanged. It is an error to add a second label, to name
// a column c already has, or to ask for a prevalence or AUC out of range.
func AddLabel(c *Cohort, l Label, seed int64) error {
	if l.Prevalence == 0 {
		l.Prevalence = DefaultPrevalence
	}
	if l.AUC == 0 {
		l.AUC = DefaultLabelAUC
	}
	bad := func(field string, value any, want string) error {
		return &ConfigError{Field: field, Value: value, Want: want}
	}
	n := len(c.Participants)
	patients := int(math.Round(l.Prevalence * float64(n)))
	switch {
	case c.LabelTruth != nil || len(c.Labels) > 0:
		return bad("Label.Name", l.Name, "one label per cohort")
	case l.Name == "" || slices.Contains(c.Targets, l.Name) || slices.Contains(c.Covariates, l.Name) ||
		slices.Contains([]string{"participant_id", "family", "site"}, l.Name):
		return bad("Label.Name", l.Name, "a column name the cohort does not already have")
	case !(l.Prevalence > 0 && l.Prevalence < 1):
		return bad("Label.Prevalence", l.Prevalence, "a share in (0, 1)")
	case patients < 2 || n-patients < 2:
		return bad("Label.Prevalence", l.Prevalence, fmt.Sprintf("a share leaving at least 2 participants of each class among %d", n))
	case !l.Null && !(l.AUC > 0.5 && l.AUC < 1):
		return bad("Label.AUC", l.AUC, "an AUC in (0.5, 1)")
	}
	rng := rand.New(rand.NewPCG(uint64(seed), 0x6c6162656c)) // "label"
	pt := PlantedLabel{Label: l.Name, Prevalence: l.Prevalence, AUC: 0.5}
	var d []float64
	if !l.Null {
		p := c.P()
		setSize := max(3, p/8)
		order := rng.Perm(p)
		pt.Positive, pt.Negative = withinEdges(sorted(order[:setSize])), withinEdges(sorted(order[setSize:2*setSize]))
		d = PlantedSignal(c.Participants, Planted{Positive: pt.Positive, Negative: pt.Negative})
		pt.Signal = d
		pt.Effect = labelEffect(l.AUC, l.Prevalence)
		pt.AUC = LabelOracleAUC(pt.Effect, l.Prevalence)
	}
	famValue := map[string]float64{}
	liability := make([]float64, n)
	for i, part := range c.Participants {
		eps := rng.NormFloat64()
		if part.Group != "" {
			f, ok := famValue[part.Group]
			if !ok {
				f = rng.NormFloat64()
				famValue[part.Group] = f
			}
			eps = math.Sqrt(familyShare)*f + math.Sqrt(1-familyShare)*eps
		}
		liability[i] = math.Sqrt(1-pt.Effect*pt.Effect) * eps
		if d != nil {
			liability[i] += pt.Effect * d[i]
		}
	}
	rank := make([]int, n)
	for i := range rank {
		rank[i] = i
	}
	slices.SortStableFunc(rank, func(a, b int) int {
		switch {
		case liability[a] > liability[b]:
			return -1
		case liability[a] < liability[b]:
			return 1
		}
		return 0
	})
	for _, part := range c.Participants {
		part.Labels = []int{0}
	}
	for _, i := range rank[:patients] {
		c.Participants[i].Labels[0] = 1
	}
	c.Labels = []string{l.Name}
	c.Classes = [][]string{slices.Clone(LabelClasses)}
	c.LabelTruth = &pt
	return nil
}

// LabelOracleAUC returns the population ROC AUC of d for the label of the
// liability-threshold model of Label: with (d, L) standard bivariate
// normal of correlation rho and patients those with L > t, t = Φ⁻¹(1 −
// prevalence),
//
//	AUC = ∫ f₁(x) F₀(x) dx,
//	f₁(x) = φ(x)·(1 − Φ((t − ρx)/s)) / prevalence,
//	F₀(x) = ∫_{−∞}^{x} φ(u)·Φ((t − ρu)/s) du / (1 − prevalence),
//
// s = √(1 − ρ²), computed by the trapezoidal rule on [−9, 9]. It is 0.5
// at rho = 0 and rises to 1 as rho goes to 1. rho must lie in [0, 1) and
// prevalence in (0, 1).
func LabelOracleAUC(rho, prevalence float64) float64 {
	if rho < 0 || rho >= 1 || !(prevalence > 0 && prevalence < 1) {
		panic("synth: LabelOracleAUC: rho or prevalence out of range")
	}
	norm := distuv.UnitNormal
	t := norm.Quantile(1 - prevalence)
	s := math.Sqrt(1 - rho*rho)
	const lo, hi, steps = -9.0, 9.0, 36000
	h := (hi - lo) / steps
	var auc, cdf0, prevF1, prevF0 float64
	for k := 0; k <= steps; k++ {
		x := lo + float64(k)*h
		phi := norm.Prob(x)
		below := norm.CDF((t - rho*x) / s)
		f1 := phi * (1 - below) / prevalence
		f0 := phi * below / (1 - prevalence)
		if k > 0 {
			newCDF := cdf0 + h*(prevF0+f0)/2
			auc += h * (prevF1*cdf0 + f1*newCDF) / 2
			cdf0 = newCDF
		}
		prevF1, prevF0 = f1, f0
	}
	return auc
}

// labelEffect returns the ρ of LabelOracleAUC(ρ, prevalence) = auc, by
// bisection to 1e-10.
func labelEffect(auc, prevalence float64) float64 {
	lo, hi := 0.0, 1-1e-12
	for hi-lo > 1e-10 {
		mid := (lo + hi) / 2
		if LabelOracleAUC(mid, prevalence) < auc {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}
