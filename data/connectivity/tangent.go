package connectivity

import (
	"fmt"
	"math"
	"runtime"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// eigen returns the eigenvalues and eigenvectors (columns) of a.
func eigen(a mat.Symmetric) ([]float64, *mat.Dense, error) {
	var e mat.EigenSym
	if !e.Factorize(a, true) {
		return nil, nil, fmt.Errorf("connectivity: the eigendecomposition did not converge")
	}
	vals := e.Values(nil)
	var vecs mat.Dense
	e.VectorsTo(&vecs)
	return vals, &vecs, nil
}

// fromEigen returns V diag(f) Vᵀ.
func fromEigen(vecs *mat.Dense, f []float64) *mat.SymDense {
	p := len(f)
	scaled := mat.DenseCopyOf(vecs)
	for j := range p {
		for i := range p {
			scaled.Set(i, j, scaled.At(i, j)*f[j])
		}
	}
	var prod mat.Dense
	prod.Mul(scaled, vecs.T())
	out := mat.NewSymDense(p, nil)
	for i := range p {
		for j := i; j < p; j++ {
			out.SetSym(i, j, 0.5*(prod.At(i, j)+prod.At(j, i)))
		}
	}
	return out
}

// positive returns the eigendecomposition of a, or an error wrapping
// ErrNotPositiveDefinite naming the smallest eigenvalue.
func positive(a mat.Symmetric) ([]float64, *mat.Dense, error) {
	vals, vecs, err := eigen(a)
	if err != nil {
		return nil, nil, err
	}
	if vals[0] <= 0 {
		return nil, nil, fmt.Errorf("smallest eigenvalue %.3g: %w", vals[0], ErrNotPositiveDefinite)
	}
	return vals, vecs, nil
}

// apply returns f(a) = V diag(f(λ)) Vᵀ of the positive definite a.
func apply(a mat.Symmetric, f func(float64) float64) (*mat.SymDense, error) {
	vals, vecs, err := positive(a)
	if err != nil {
		return nil, err
	}
	for k, v := range vals {
		vals[k] = f(v)
	}
	return fromEigen(vecs, vals), nil
}

// Logm returns the matrix logarithm of the symmetric positive definite
// a, V diag(log λ) Vᵀ; an a that is not positive definite is an error
// wrapping ErrNotPositiveDefinite.
func Logm(a mat.Symmetric) (*mat.SymDense, error) { return apply(a, math.Log) }

// Expm returns the matrix exponential of the symmetric a, V diag(exp λ) Vᵀ.
func Expm(a mat.Symmetric) (*mat.SymDense, error) {
	vals, vecs, err := eigen(a)
	if err != nil {
		return nil, err
	}
	for k, v := range vals {
		vals[k] = math.Exp(v)
	}
	return fromEigen(vecs, vals), nil
}

// InvSqrtm returns a^(−1/2) = V diag(λ^(−1/2)) Vᵀ of the symmetric
// positive definite a (else an error wrapping ErrNotPositiveDefinite).
func InvSqrtm(a mat.Symmetric) (*mat.SymDense, error) {
	return apply(a, func(v float64) float64 { return 1 / math.Sqrt(v) })
}

// whitened returns w c w, for a whitening matrix w = M^(−1/2).
func whitened(w, c mat.Symmetric) *mat.SymDense {
	p := c.SymmetricDim()
	var wc, wcw mat.Dense
	wc.Mul(w, c)
	wcw.Mul(&wc, w)
	out := mat.NewSymDense(p, nil)
	for i := range p {
		for j := i; j < p; j++ {
			out.SetSym(i, j, 0.5*(wcw.At(i, j)+wcw.At(j, i)))
		}
	}
	return out
}

// Tangent returns the tangent-space coordinates of the covariance c at
// the reference M, given w = M^(−1/2) (InvSqrtm):
//
//	T = log(M^(−1/2) c M^(−1/2))
//
// (Varoquaux et al. 2010, "Detection of brain functional-connectivity
// difference in post-stroke patients using group-level covariance
// modeling", MICCAI, eq. 3). T is symmetric; T = 0 when c = M. c must be
// positive definite (else an error wrapping ErrNotPositiveDefinite).
func Tangent(c, w mat.Symmetric) (*mat.SymDense, error) {
	return Logm(whitened(w, c))
}

// LogEuclideanMean returns the log-Euclidean mean of the covariances cs
// (Arsigny et al. 2007, SIAM J. Matrix Anal. Appl. 29(1)):
//
//	M = exp((1/n) Σ_i log c_i).
//
// Every c_i must be positive definite and of the same size; cs must not be
// empty. The logarithms are computed concurrently (on up to GOMAXPROCS
// goroutines) and summed in order, so the result does not depend on how
// many ran.
func LogEuclideanMean(cs []mat.Symmetric) (*mat.SymDense, error) {
	if len(cs) == 0 {
		panic("connectivity: no covariances")
	}
	logs := make([]*mat.SymDense, len(cs))
	if err := each(len(cs), func(i int) error {
		var err error
		if logs[i], err = Logm(cs[i]); err != nil {
			return fmt.Errorf("covariance %d: %w", i+1, err)
		}
		return nil
	}); err != nil {
		return nil, err
	}
	return Expm(meanOf(logs))
}

// meanOf returns the entrywise mean of the symmetric matrices ms, summed in order.
func meanOf(ms []*mat.SymDense) *mat.SymDense {
	p := ms[0].SymmetricDim()
	sum := mat.NewSymDense(p, nil)
	for _, m := range ms {
		sum.AddSym(sum, m)
	}
	sum.ScaleSym(1/float64(len(ms)), sum)
	return sum
}

// GeometricOptions bound the fixed-point iteration of GeometricMean.
// The zero value takes the defaults.
type GeometricOptions struct {
	// Tol stops the iteration when the Frobenius norm of the mean tangent
	// vector, divided by p², falls below it; 0 means 1e-7.
	Tol float64
	// MaxIter is the most iterations; 0 means 50.
	MaxIter int
}

// GeometricMean returns the affine-invariant (geometric, Karcher) mean of
// the covariances cs, the M minimizing Σ_i ‖log(M^(−1/2) c_i M^(−1/2))‖²_F,
// and the number of iterations taken. It is the fixed-point iteration of
// the Riemannian gradient descent with unit step (Pennec, Fillard &
// Ayache 2006, Int. J. Comput. Vision 66(1), §3.4; Moakher 2005, SIAM J.
// Matrix Anal. Appl. 26(3)), started at the arithmetic mean:
//
//	G_0 = (1/n) Σ_i c_i,
//	L_k = (1/n) Σ_i log(G_k^(−1/2) c_i G_k^(−1/2)),
//	G_{k+1} = G_k^(1/2) exp(L_k) G_k^(1/2),
//
// stopping when ‖L_k‖_F / p² < opt.Tol (then G_{k+1} is returned) or
// after opt.MaxIter iterations (an error saying so, with the last G). Every
// c_i must be positive definite and of the same size; cs must not be
// empty. Each iteration takes one eigendecomposition per c_i, computed
// concurrently and summed in order.
func GeometricMean(cs []mat.Symmetric, opt GeometricOptions) (*mat.SymDense, int, error) {
	if len(cs) == 0 {
		panic("connectivity: no covariances")
	}
	if opt.Tol == 0 {
		opt.Tol = 1e-7
	}
	if opt.MaxIter == 0 {
		opt.MaxIter = 50
	}
	p := cs[0].SymmetricDim()
	g := mat.NewSymDense(p, nil)
	for _, c := range cs {
		g.AddSym(g, c)
	}
	g.ScaleSym(1/float64(len(cs)), g)
	logs := make([]*mat.SymDense, len(cs))
	for k := 1; k <= opt.MaxIter; k++ {
		vals, vecs, err := positive(g)
		if err != nil {
			return nil, k, fmt.Errorf("geometric mean, iteration %d: %w", k, err)
		}
		inv, sqrt := make([]float64, p), make([]float64, p)
		for j, v := range vals {
			sqrt[j] = math.Sqrt(v)
			inv[j] = 1 / sqrt[j]
		}
		w, gs := fromEigen(vecs, inv), fromEigen(vecs, sqrt)
		if err := each(len(cs), func(i int) error {
			var err error
			if logs[i], err = Tangent(cs[i], w); err != nil {
				return fmt.Errorf("covariance %d: %w", i+1, err)
			}
			return nil
		}); err != nil {
			return nil, k, fmt.Errorf("geometric mean, iteration %d: %w", k, err)
		}
		l := meanOf(logs)
		e, err := Expm(l)
		if err != nil {
			return nil, k, err
		}
		g = whitened(gs, e)
		if mat.Norm(l, 2)/float64(p*p) < opt.Tol {
			return g, k, nil
		}
	}
	return g, opt.MaxIter, fmt.Errorf("geometric mean: no convergence to tolerance %g in %d iterations", opt.Tol, opt.MaxIter)
}

// Vectorize returns the usual vector of a symmetric tangent matrix t: its
// upper triangle in row-major order, off-diagonal entries multiplied by
// √2 so that the Euclidean norm of the vector is the Frobenius norm of t,
//
//	(t_11, √2 t_12, …, √2 t_1p, t_22, √2 t_23, …, t_pp),
//
// of length p(p+1)/2; with keepDiagonal false the diagonal entries are
// left out, giving the p(p−1)/2 entries (√2 t_ij, i < j).
func Vectorize(t mat.Symmetric, keepDiagonal bool) []float64 {
	p := t.SymmetricDim()
	n := p * (p - 1) / 2
	if keepDiagonal {
		n += p
	}
	v := make([]float64, 0, n)
	for i := range p {
		if keepDiagonal {
			v = append(v, t.At(i, i))
		}
		for j := i + 1; j < p; j++ {
			v = append(v, math.Sqrt2*t.At(i, j))
		}
	}
	return v
}

// each runs f(0), …, f(n−1) on up to GOMAXPROCS goroutines and returns the
// error of the smallest i that failed.
func each(n int, f func(i int) error) error {
	errs := make([]error, n)
	workers := min(n, runtime.GOMAXPROCS(0))
	var wg sync.WaitGroup
	next := make(chan int)
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				errs[i] = f(i)
			}
		}()
	}
	for i := range n {
		next <- i
	}
	close(next)
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}
