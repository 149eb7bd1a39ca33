package linear

import (
	"fmt"
	"slices"

	"gonum.org/v1/gonum/lapack/gonum"
	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/internal/lapack"
)

// A factor is one factorization of a ridge problem with basis B from
// which the solution at any penalty follows by a cheap solve:
//
//	spectrum (eigen or SVD): B = U or V, S(a) diagonal (see spectrum);
//	tridiagonal: K = Q T Qᵀ, B = Q, S(a) = T + aI.
//
// The coefficients of a column y at penalty a are B·S(a)⁻¹·Bᵀy.
type factor interface {
	// project returns Bᵀy, r × c for the n × c y (y is not changed).
	project(y *mat.Dense) *mat.Dense
	// solve sets dst (r × c) to S(penalty[j])⁻¹·proj[:, j] for every
	// column j of proj.
	solve(dst, proj *mat.Dense, penalty []float64) error
	// coefficients returns B·S(penalty[j])⁻¹·proj[:, j] for every column j.
	coefficients(proj *mat.Dense, penalty []float64) (*mat.Dense, error)
}

// A tridiagonal is the factor of a symmetric positive semidefinite n × n
// kernel K = Q T Qᵀ by Householder reduction (about 4n³/3 flops, against
// about 9n³ for the eigenvectors): (K + aI)⁻¹ = Q (T + aI)⁻¹ Qᵀ, and
// T + aI, positive definite for a > 0, is solved in O(n) by its LDLᵀ
// factorization (LAPACK's dpttrf and dpttrs). It has no pseudo-inverse:
// penalties must be positive (see tridiagonalTol).
type tridiagonal struct {
	t *lapack.Tridiagonal
}

// tridiagonalTol returns the smallest penalty the tridiagonal route takes
// for a positive semidefinite n × n kernel of the given trace: n·ε·trace(K),
// at least n·ε times its largest eigenvalue. At or below it the kernel's
// rounding matters and Ridge takes the spectrum, which zeroes negligible
// components instead (common practice, no source).
func tridiagonalTol(n int, trace float64) float64 {
	return float64(n) * 0x1p-52 * trace
}

// reduceKernel reduces the n × n kernel k in place (its lower triangle
// becomes the reflectors; k must stay unchanged while the factor is used).
func reduceKernel(k *mat.Dense) *tridiagonal {
	n, _ := k.Dims()
	raw := k.RawMatrix()
	return &tridiagonal{t: lapack.Reduce(n, raw.Data, raw.Stride)}
}

func (f *tridiagonal) project(y *mat.Dense) *mat.Dense {
	p := mat.DenseCopyOf(y)
	raw := p.RawMatrix()
	f.t.MulQ(true, raw.Cols, raw.Data, raw.Stride)
	return p
}

// factorize returns the LDLᵀ factors of T + aI.
func (f *tridiagonal) factorize(a float64) (d, e []float64, err error) {
	d = make([]float64, len(f.t.D))
	for i, v := range f.t.D {
		d[i] = v + a
	}
	e = slices.Clone(f.t.E)
	var impl gonum.Implementation
	if !impl.Dpttrf(len(d), d, e) {
		return nil, nil, fmt.Errorf("linear: the kernel plus the penalty %g is not positive definite (the penalty is too small for the kernel's rounding)", a)
	}
	return d, e, nil
}

func (f *tridiagonal) solve(dst, proj *mat.Dense, penalty []float64) error {
	dst.Copy(proj)
	raw := dst.RawMatrix()
	n := len(f.t.D)
	var impl gonum.Implementation
	if !slices.ContainsFunc(penalty, func(a float64) bool { return a != penalty[0] }) {
		d, e, err := f.factorize(penalty[0])
		if err != nil {
			return err
		}
		impl.Dpttrs(n, raw.Cols, d, e, raw.Data, raw.Stride)
		return nil
	}
	for j, a := range penalty {
		d, e, err := f.factorize(a)
		if err != nil {
			return err
		}
		impl.Dpttrs(n, 1, d, e, raw.Data[j:], raw.Stride)
	}
	return nil
}

func (f *tridiagonal) coefficients(proj *mat.Dense, penalty []float64) (*mat.Dense, error) {
	r, c := proj.Dims()
	coef := mat.NewDense(r, c, nil)
	if err := f.solve(coef, proj, penalty); err != nil {
		return nil, err
	}
	raw := coef.RawMatrix()
	f.t.MulQ(false, c, raw.Data, raw.Stride)
	return coef, nil
}

// gramBlock is the number of rows gram multiplies at a time.
const gramBlock = 256

// gram sets the n × n dst to x·xᵀ for the n × d x. It computes the upper
// triangle block row by block row with general products (gonum's or
// OpenBLAS's Dgemm, which keep their speed where a rank-k update might
// not), about (n² + n·256)·d flops against 2n²·d for the whole product,
// and copies it to the lower triangle.
func gram(dst, x *mat.Dense) {
	n, d := x.Dims()
	for i0 := 0; i0 < n; i0 += gramBlock {
		i1 := min(i0+gramBlock, n)
		dst.Slice(i0, i1, i0, n).(*mat.Dense).Mul(x.Slice(i0, i1, 0, d), x.Slice(i0, n, 0, d).T())
	}
	raw := dst.RawMatrix()
	for i := 1; i < n; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+i]
		for j := range row {
			row[j] = raw.Data[j*raw.Stride+i]
		}
	}
}

// gramBuffers are two blocks of standardized rows, gramBlock × d each,
// reused by stdGram and stdMulT.
type gramBuffers struct{ a, b *mat.Dense }

func (g *gramBuffers) ensure(d int) {
	if g.a == nil {
		g.a, g.b = mat.NewDense(gramBlock, d, nil), mat.NewDense(gramBlock, d, nil)
	}
}

// stdGram sets the m × m dst to X̃X̃ᵀ for the rows of x standardized by
// sc, X̃[a] = sc(x.row(rows[a])), without holding X̃: it standardizes two
// blocks of gramBlock rows at a time and multiplies them (gonum's or
// OpenBLAS's Dgemm) for the blocks on and above the diagonal, then copies
// the upper triangle to the lower. Rows are standardized again for every
// block they meet, about m²·d/(2·gramBlock) flops against m²·d for the
// products.
func (g *gramBuffers) stdGram(dst *mat.Dense, sc scaler, x rowReader, rows []int) {
	m, d := len(rows), x.width()
	g.ensure(d)
	for i0 := 0; i0 < m; i0 += gramBlock {
		i1 := min(i0+gramBlock, m)
		a := sc.applyRows(g.a.Slice(0, i1-i0, 0, d).(*mat.Dense), x, rows[i0:i1])
		for j0 := i0; j0 < m; j0 += gramBlock {
			j1 := min(j0+gramBlock, m)
			b := a
			if j0 != i0 {
				b = sc.applyRows(g.b.Slice(0, j1-j0, 0, d).(*mat.Dense), x, rows[j0:j1])
			}
			dst.Slice(i0, i1, j0, j1).(*mat.Dense).Mul(a, b.T())
		}
	}
	raw := dst.RawMatrix()
	for i := 1; i < m; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+i]
		for j := range row {
			row[j] = raw.Data[j*raw.Stride+i]
		}
	}
}

// stdMulT returns X̃ᵀc (d × c) for the standardized rows X̃ of stdGram and
// the len(rows) × c matrix c, a block of rows at a time.
func (g *gramBuffers) stdMulT(sc scaler, x rowReader, rows []int, c *mat.Dense) *mat.Dense {
	d := x.width()
	_, cols := c.Dims()
	g.ensure(d)
	out := mat.NewDense(d, cols, nil)
	var part mat.Dense
	for i0 := 0; i0 < len(rows); i0 += gramBlock {
		i1 := min(i0+gramBlock, len(rows))
		a := sc.applyRows(g.a.Slice(0, i1-i0, 0, d).(*mat.Dense), x, rows[i0:i1])
		part.Reset()
		part.Mul(a.T(), c.Slice(i0, i1, 0, cols))
		out.Add(out, &part)
	}
	return out
}

// trace returns the sum of the diagonal of the square k.
func trace(k *mat.Dense) float64 {
	n, _ := k.Dims()
	var s float64
	for i := 0; i < n; i++ {
		s += k.At(i, i)
	}
	return s
}

// kernelFold returns the fold problem of a symmetric (m × m) kernel g of
// the rows fit then query, the first nf of them fitting: the tridiagonal
// route when every penalty exceeds tridiagonalTol, which overwrites the
// lower triangle of g's fitting block; otherwise the eigendecomposition.
func kernelFold(g *mat.Dense, nf int, penalties []float64) (foldProblem, error) {
	m, _ := g.Dims()
	kff := g.Slice(0, nf, 0, nf).(*mat.Dense)
	kfq := g.Slice(0, nf, nf, m).(*mat.Dense)
	if slices.Min(penalties) <= tridiagonalTol(nf, trace(kff)) {
		return dualProblem(kff, kfq.T())
	}
	f := reduceKernel(kff)
	return foldProblem{spec: f, queryBasis: f.project(kfq).T()}, nil
}

// fitKernel returns the factor of the n × n kernel k for coefficients at
// penalties (one per column), as kernelFold chooses it.
func fitKernel(k *mat.Dense, penalties []float64) (factor, error) {
	n, _ := k.Dims()
	if slices.Min(penalties) <= tridiagonalTol(n, trace(k)) {
		return dualSpectrum(k)
	}
	return reduceKernel(k), nil
}
