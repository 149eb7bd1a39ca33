package train

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// edgeScalerName is the Name of an EdgeScaler in saved files.
const edgeScalerName = "edges"

// An EdgeScaler is an input step (Prep) that standardizes the
// participants' matrices edge by edge with the training participants'
// mean and SD: for a standardized modality (functional, structural) and
// each edge i < j, with x_k the value of participant k of the n training
// participants,
//
//	μ = (1/n) Σ_k x_k,  σ = sqrt((1/n) Σ_k (x_k − μ)²)
//
// (the population SD, as scikit-learn's StandardScaler), and Apply
// replaces both entries (i, j) and (j, i) of a matrix by
//
//	z = (x − μ)/σ,
//
// each entry by its own value, so a symmetric matrix stays symmetric. An
// edge whose training values are all equal has σ = 1 (it is centred, to 0
// exactly, and not divided). The diagonal becomes 0: it holds no edge, and
// preprocessing leaves it at 0 or at values on another scale than the
// edges. A modality the step does not standardize is left as it is (the
// result shares its matrices).
//
// Fit reads the matrices alone, never scores or covariates; Apply of a
// participant without a standardized modality's matrix is an error. The
// runner fits one EdgeScaler per fold, on the fold's training
// participants, and gives it to the models whose kind asks for it
// (model.Kind.EdgeScaling): their Pipeline is the fold's shared steps
// followed by this step, saved with the fold model (fitted.json) and
// replayed by skein predict.
//
// The JSON encoding holds Functional and Structural and, for each
// standardized modality, μ and σ of the p(p−1)/2 edges i < j in row-major
// order (edge (0,1), (0,2), …, (1,2), …).
type EdgeScaler struct {
	// Functional and Structural choose the modalities to standardize; set
	// them before Fit.
	Functional bool `json:"functional"`
	Structural bool `json:"structural"`
	// P is the number of regions, set by Fit.
	P int `json:"p"`
	// FunctionalMean and FunctionalSD hold μ and σ of each functional
	// edge, set by Fit when Functional is; likewise for the structural
	// matrices.
	FunctionalMean []float64 `json:"functional_mean,omitempty"`
	FunctionalSD   []float64 `json:"functional_sd,omitempty"`
	StructuralMean []float64 `json:"structural_mean,omitempty"`
	StructuralSD   []float64 `json:"structural_sd,omitempty"`
}

// Name returns "edges".
func (e *EdgeScaler) Name() string { return edgeScalerName }

// modality is one standardized matrix of a participant and its fitted
// parameters.
type modality struct {
	name     string
	get      func(*data.Participant) *mat.Dense
	set      func(*data.Participant, *mat.Dense)
	mean, sd *[]float64
}

func (e *EdgeScaler) modalities() []modality {
	var ms []modality
	if e.Functional {
		ms = append(ms, modality{"functional", (*data.Participant).FunctionalMatrix,
			func(p *data.Participant, m *mat.Dense) { p.Functional = m }, &e.FunctionalMean, &e.FunctionalSD})
	}
	if e.Structural {
		ms = append(ms, modality{"structural", (*data.Participant).StructuralMatrix,
			func(p *data.Participant, m *mat.Dense) { p.Structural = m }, &e.StructuralMean, &e.StructuralSD})
	}
	return ms
}

// Fit computes μ and σ of every edge of each standardized modality over
// the participants of train, which must all have its p × p matrix with
// p = len(train.Regions).
func (e *EdgeScaler) Fit(train *data.Cohort) error {
	if len(train.Participants) == 0 {
		return errors.New("no training participants")
	}
	p := train.P()
	e.P = p
	edges := p * (p - 1) / 2
	for _, m := range e.modalities() {
		mean, sd := make([]float64, edges), make([]float64, edges)
		first := make([]float64, edges)
		constant := make([]bool, edges)
		for k, pt := range train.Participants {
			x, err := e.matrix(m, pt)
			if err != nil {
				return err
			}
			for i, ij := 0, 0; i < p; i++ {
				for j := i + 1; j < p; j, ij = j+1, ij+1 {
					v := x.At(i, j)
					mean[ij] += v
					if k == 0 {
						first[ij], constant[ij] = v, true
					} else if v != first[ij] {
						constant[ij] = false
					}
				}
			}
		}
		n := float64(len(train.Participants))
		for ij := range mean {
			mean[ij] /= n
		}
		for _, pt := range train.Participants {
			x := m.get(pt)
			for i, ij := 0, 0; i < p; i++ {
				for j := i + 1; j < p; j, ij = j+1, ij+1 {
					d := x.At(i, j) - mean[ij]
					sd[ij] += d * d
				}
			}
		}
		for ij := range sd {
			sd[ij] = math.Sqrt(sd[ij] / n)
			if constant[ij] {
				mean[ij], sd[ij] = first[ij], 1
			}
		}
		*m.mean, *m.sd = mean, sd
	}
	return nil
}

// matrix returns pt's matrix of modality m, checked to be P × P.
func (e *EdgeScaler) matrix(m modality, pt *data.Participant) (*mat.Dense, error) {
	x := m.get(pt)
	if x == nil {
		return nil, fmt.Errorf("participant %s has no %s matrix", pt.ID, m.name)
	}
	if r, c := x.Dims(); r != e.P || c != e.P {
		return nil, fmt.Errorf("participant %s: the %s matrix is %d × %d, want %d × %d", pt.ID, m.name, r, c, e.P, e.P)
	}
	return x, nil
}

// check reports whether the fitted parameters fit P.
func (e *EdgeScaler) check() error {
	edges := e.P * (e.P - 1) / 2
	for _, m := range e.modalities() {
		if len(*m.mean) != edges || len(*m.sd) != edges {
			return fmt.Errorf("%s: %d means and %d SDs for %d regions, want %d each (is the step fitted?)", m.name, len(*m.mean), len(*m.sd), e.P, edges)
		}
	}
	return nil
}

// Apply returns c with each standardized modality's matrices replaced by
// new ones, standardized as EdgeScaler says.
func (e *EdgeScaler) Apply(c *data.Cohort) (*data.Cohort, error) {
	return e.transform(c, false)
}

// Reference returns c with each standardized modality's matrices replaced
// by what Apply makes of a matrix of zeros: −μ/σ off the diagonal, 0 on
// it. Measured from it, a standardized input z is x/σ, so gradient ×
// (input − reference) is the gradient with respect to the raw matrix
// times the raw matrix (the chain rule, ∂z/∂x = 1/σ). Modalities the step
// leaves alone are kept.
func (e *EdgeScaler) Reference(c *data.Cohort) (*data.Cohort, error) {
	return e.transform(c, true)
}

func (e *EdgeScaler) transform(c *data.Cohort, zero bool) (*data.Cohort, error) {
	if err := e.check(); err != nil {
		return nil, err
	}
	out := *c
	out.Participants = make([]*data.Participant, len(c.Participants))
	p := e.P
	for k, pt := range c.Participants {
		copied := *pt
		for _, m := range e.modalities() {
			x, err := e.matrix(m, pt)
			if err != nil {
				return nil, err
			}
			mean, sd := *m.mean, *m.sd
			z := mat.NewDense(p, p, nil)
			for i, ij := 0, 0; i < p; i++ {
				for j := i + 1; j < p; j, ij = j+1, ij+1 {
					a, b := x.At(i, j), x.At(j, i)
					if zero {
						a, b = 0, 0
					}
					z.Set(i, j, (a-mean[ij])/sd[ij])
					z.Set(j, i, (b-mean[ij])/sd[ij])
				}
			}
			m.set(&copied, z)
		}
		out.Participants[k] = &copied
	}
	return &out, nil
}

// only returns a copy of e that standardizes the modalities asked for
// among those e does, sharing e's parameters; nil when none is left.
func (e *EdgeScaler) only(functional, structural bool) *EdgeScaler {
	o := &EdgeScaler{P: e.P, Functional: functional && e.Functional, Structural: structural && e.Structural}
	if o.Functional {
		o.FunctionalMean, o.FunctionalSD = e.FunctionalMean, e.FunctionalSD
	}
	if o.Structural {
		o.StructuralMean, o.StructuralSD = e.StructuralMean, e.StructuralSD
	}
	if !o.Functional && !o.Structural {
		return nil
	}
	return o
}
