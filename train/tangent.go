package train

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"sync"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/connectivity"
)

// tangentName is the Name of a TangentSpace in saved files.
const tangentName = "tangent"

// A TangentSpace is an input step (Prep) that embeds the participants'
// functional covariances in the tangent space of the symmetric positive
// definite matrices at a reference mean M fitted on the training
// participants (Varoquaux et al. 2010, MICCAI): each covariance C becomes
//
//	T = log(M^(−1/2) C M^(−1/2)),
//
// given to the models as the p × p matrix with entries √2 t_ij off the
// diagonal and, with Diagonal "keep", t_ii on it (0 with "drop"). Its
// upper triangle is the usual vectorisation (connectivity.Vectorize):
// the Euclidean geometry of the vectors is the Frobenius geometry of the
// tangent matrices. M is the geometric (affine-invariant) mean of the
// training covariances (connectivity.GeometricMean) or their
// log-Euclidean mean (connectivity.LogEuclideanMean), as Mean says.
//
// The cohort must come from time series with estimator "tangent"
// (data.Cohort.Series), so that each Functional matrix is a covariance,
// estimated with the Shrinkage the step was fitted with. Fit reads the
// training participants' covariances alone, never their scores, so the
// test fold moves no reference mean. The runner adds the step to every
// fold's Pipeline after the target steps; it is saved with each fold
// model and replayed by skein predict. Apply embeds participants
// concurrently on up to GOMAXPROCS goroutines; the result does not
// depend on how many.
//
// The JSON encoding holds the settings, P, the reference M (p × p,
// row-major) and the iterations the geometric mean took.
type TangentSpace struct {
	// Mean, Diagonal and Shrinkage are the cohort's settings
	// (data.SeriesSettings); set them before Fit. Shrinkage is checked
	// against the cohorts Apply is given.
	Mean      data.TangentMean     `json:"mean"`
	Diagonal  data.TangentDiagonal `json:"diagonal"`
	Shrinkage data.Shrinkage       `json:"shrinkage"`
	// P is the number of regions, set by Fit.
	P int `json:"p"`
	// Reference is the fitted reference mean M, p × p in row-major order.
	Reference []float64 `json:"reference"`
	// Iterations is the number of fixed-point iterations of a geometric
	// mean (0 for the log-Euclidean mean).
	Iterations int `json:"iterations,omitempty"`
}

// Name returns "tangent".
func (s *TangentSpace) Name() string { return tangentName }

// newTangentSpace returns the unfitted step for a cohort's series
// settings, or nil when the cohort needs none.
func newTangentSpace(set *data.SeriesSettings) *TangentSpace {
	if set == nil || set.Estimator != data.EstimatorTangent {
		return nil
	}
	return &TangentSpace{Mean: set.TangentMean, Diagonal: set.TangentDiagonal, Shrinkage: set.Shrinkage}
}

// covariances returns the functional covariances of c, checked to come
// from the estimator and shrinkage the step expects and to be P × P.
func (s *TangentSpace) covariances(c *data.Cohort) ([]mat.Symmetric, error) {
	if c.Series == nil || c.Series.Estimator != data.EstimatorTangent {
		return nil, fmt.Errorf("the tangent space needs covariances: read the functional series with estimator = %q in [cohort.functional]", data.EstimatorTangent)
	}
	if c.Series.Shrinkage != s.Shrinkage {
		return nil, fmt.Errorf("the tangent space was fitted on covariances with shrinkage = %q, but these have shrinkage = %q; set it alike in [cohort.functional]", s.Shrinkage, c.Series.Shrinkage)
	}
	covs := make([]mat.Symmetric, len(c.Participants))
	for i, pt := range c.Participants {
		f := pt.FunctionalMatrix()
		if f == nil {
			return nil, fmt.Errorf("participant %s has no functional covariance", pt.ID)
		}
		if r, cc := f.Dims(); r != s.P || cc != s.P {
			return nil, fmt.Errorf("participant %s: the functional covariance is %d × %d, want %d × %d", pt.ID, r, cc, s.P, s.P)
		}
		covs[i] = symmetric(f)
	}
	return covs, nil
}

// symmetric returns the symmetric matrix of a's upper triangle.
func symmetric(a *mat.Dense) *mat.SymDense {
	p, _ := a.Dims()
	s := mat.NewSymDense(p, nil)
	for i := range p {
		for j := i; j < p; j++ {
			s.SetSym(i, j, a.At(i, j))
		}
	}
	return s
}

// Fit computes the reference mean M of the training participants'
// covariances (geometric: connectivity.GeometricMean with its default
// tolerance; log_euclidean: connectivity.LogEuclideanMean).
func (s *TangentSpace) Fit(train *data.Cohort) error {
	if len(train.Participants) == 0 {
		return errors.New("no training participants")
	}
	s.P = train.P()
	covs, err := s.covariances(train)
	if err != nil {
		return err
	}
	var m *mat.SymDense
	switch s.Mean {
	case data.TangentLogEuclidean:
		m, err = connectivity.LogEuclideanMean(covs)
		s.Iterations = 0
	case data.TangentGeometric:
		m, s.Iterations, err = connectivity.GeometricMean(covs, connectivity.GeometricOptions{})
	default:
		return fmt.Errorf("unknown reference mean %q", s.Mean)
	}
	if err != nil {
		return fmt.Errorf("%s mean of the training covariances: %w", s.Mean, err)
	}
	s.Reference = mat.DenseCopyOf(m).RawMatrix().Data
	return nil
}

// Apply returns c with every participant's functional covariance replaced
// by its tangent matrix at the fitted reference (see TangentSpace).
func (s *TangentSpace) Apply(c *data.Cohort) (*data.Cohort, error) {
	if len(s.Reference) != s.P*s.P || s.P == 0 {
		return nil, fmt.Errorf("reference of %d values for %d regions (is the step fitted?)", len(s.Reference), s.P)
	}
	covs, err := s.covariances(c)
	if err != nil {
		return nil, err
	}
	w, err := connectivity.InvSqrtm(symmetric(mat.NewDense(s.P, s.P, s.Reference)))
	if err != nil {
		return nil, fmt.Errorf("reference mean: %w", err)
	}
	out := *c
	out.Series = nil // the matrices are no longer covariances
	out.Participants = make([]*data.Participant, len(c.Participants))
	errs := make([]error, len(covs))
	parallelFor(len(covs), func(i int) {
		t, err := connectivity.Tangent(covs[i], w)
		if err != nil {
			errs[i] = fmt.Errorf("participant %s: %w", c.Participants[i].ID, err)
			return
		}
		m := mat.NewDense(s.P, s.P, nil)
		for a := range s.P {
			if s.Diagonal == data.DiagonalKeep {
				m.Set(a, a, t.At(a, a))
			}
			for b := a + 1; b < s.P; b++ {
				v := math.Sqrt2 * t.At(a, b)
				m.Set(a, b, v)
				m.Set(b, a, v)
			}
		}
		copied := *c.Participants[i]
		copied.Functional = m
		out.Participants[i] = &copied
	})
	if err := errors.Join(errs...); err != nil {
		return nil, err
	}
	return &out, nil
}

// parallelFor runs f(0), …, f(n−1) on up to GOMAXPROCS goroutines.
func parallelFor(n int, f func(i int)) {
	next := make(chan int)
	var wg sync.WaitGroup
	for range min(n, runtime.GOMAXPROCS(0)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				f(i)
			}
		}()
	}
	for i := range n {
		next <- i
	}
	close(next)
	wg.Wait()
}
