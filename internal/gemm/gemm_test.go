package gemm

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"testing"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/gonum"
)

// product is one test case of C = alpha·op(A)·op(B) + beta·C.
type product struct {
	tA, tB        bool
	m, n, k       int
	lda, ldb, ldc int
	alpha, beta   float64
	nanC          bool // C holds NaN before the product
}

func (p product) String() string {
	t := func(b bool) string {
		if b {
			return "T"
		}
		return "N"
	}
	return fmt.Sprintf("%s%s/m=%d,n=%d,k=%d/ld=%d,%d,%d/alpha=%v,beta=%v/nan=%v",
		t(p.tA), t(p.tB), p.m, p.n, p.k, p.lda, p.ldb, p.ldc, p.alpha, p.beta, p.nanC)
}

// shapes returns the rows and columns of the stored A and B.
func (p product) shapes() (ar, ac, br, bc int) {
	ar, ac, br, bc = p.m, p.k, p.k, p.n
	if p.tA {
		ar, ac = ac, ar
	}
	if p.tB {
		br, bc = bc, br
	}
	return
}

// inputs returns A, B and C for p, with values in [-1, 1) and, in the
// padding of each row beyond its length, NaN (which must never be read).
func (p product) inputs(rng *rand.Rand) (a, b, c []float64) {
	ar, ac, br, bc := p.shapes()
	fill := func(rows, cols, ld int) []float64 {
		s := make([]float64, max(0, (rows-1)*ld+cols))
		for i := range s {
			if i%ld < cols {
				s[i] = 2*rng.Float64() - 1
			} else {
				s[i] = math.NaN()
			}
		}
		return s
	}
	a, b, c = fill(ar, ac, p.lda), fill(br, bc, p.ldb), fill(p.m, p.n, p.ldc)
	if p.nanC {
		for i := range c {
			c[i] = math.NaN()
		}
	}
	return a, b, c
}

func trans(t bool) blas.Transpose {
	if t {
		return blas.Trans
	}
	return blas.NoTrans
}

// products returns the table: every transpose pair, sizes around the tile
// sizes of both kernels (1 to 67), rows padded (lda > k and so on), and
// the alpha and beta of the special paths of reference BLAS.
func products() []product {
	var ps []product
	sizes := []int{1, 2, 3, 4, 5, 6, 7, 8, 9, 15, 16, 17, 31, 33, 48, 67}
	scalars := []struct {
		alpha, beta float64
		nanC        bool
	}{
		{1, 0, true},     // beta = 0 overwrites NaN (reference BLAS)
		{1, 1, false},    // add
		{-0.5, 2, false}, // scale C first
		{0, 0.5, false},  // alpha = 0: only C scaled
		{0, 0, true},     // alpha = beta = 0: C set to zero, NaN included
		{1.5, 0, false},
	}
	i := 0
	for _, tA := range []bool{false, true} {
		for _, tB := range []bool{false, true} {
			for _, m := range sizes {
				for _, n := range sizes {
					// k from the sizes, turn by turn, and k = 0.
					k := sizes[i%len(sizes)]
					if i%41 == 0 {
						k = 0
					}
					s := scalars[i%len(scalars)]
					pad := i % 3 // 0, 1 or 2 values past each row
					p := product{tA: tA, tB: tB, m: m, n: n, k: k, alpha: s.alpha, beta: s.beta, nanC: s.nanC}
					_, ac, _, bc := p.shapes()
					p.lda, p.ldb, p.ldc = max(1, ac+pad), max(1, bc+2*pad), n+pad
					ps = append(ps, p)
					i++
				}
			}
		}
	}
	return ps
}

// compare compares got with want = alpha·op(A)·op(B) + beta·C0 computed by
// gonum's reference Dgemm in float64, element by element, within tol times
// the bound of a computed inner product, |alpha|·Σ|a||b| + |beta·c0|
// (Higham, Accuracy and Stability of Numerical Algorithms, §3.1, from
// memory; an exact zero when that is zero), and checks that the padding of
// C's rows is untouched.
func compare(t *testing.T, p product, a, b, c0, got []float64, tol float64) {
	t.Helper()
	want := slices.Clone(c0)
	gonum.Implementation{}.Dgemm(trans(p.tA), trans(p.tB), p.m, p.n, p.k, p.alpha, a, p.lda, b, p.ldb, p.beta, want, p.ldc)
	abs := func(s []float64) []float64 {
		r := make([]float64, len(s))
		for i, v := range s {
			r[i] = math.Abs(v)
		}
		return r
	}
	bound := make([]float64, len(c0))
	if p.beta != 0 {
		copy(bound, abs(c0))
	}
	gonum.Implementation{}.Dgemm(trans(p.tA), trans(p.tB), p.m, p.n, p.k, math.Abs(p.alpha), abs(a), p.lda, abs(b), p.ldb, math.Abs(p.beta), bound, p.ldc)
	for i := range p.m {
		for j := range p.ldc {
			at := i*p.ldc + j
			if at >= len(got) {
				break
			}
			if j >= p.n {
				if !sameBits(got[at], c0[at]) {
					t.Fatalf("C[%d] (row padding) changed from %v to %v", at, c0[at], got[at])
				}
				continue
			}
			if math.IsNaN(got[at]) || math.Abs(got[at]-want[at]) > tol*bound[at] {
				t.Fatalf("C[%d,%d] = %v, want %v (bound %v)", i, j, got[at], want[at], tol*bound[at])
			}
		}
	}
}

func sameBits(x, y float64) bool { return math.Float64bits(x) == math.Float64bits(y) }

// TestDgemm compares every float64 kernel (and a copy of each with tiny
// blocks, so that every edge of the blocking is crossed at small sizes)
// with gonum's reference Dgemm; relative tolerance 1e-12.
func TestDgemm(t *testing.T) {
	for _, kn := range testKernels(kernels64) {
		t.Run(kn.String(), func(t *testing.T) {
			rng := rand.New(rand.NewPCG(19, 1))
			for _, p := range products() {
				a, b, c0 := p.inputs(rng)
				got := slices.Clone(c0)
				gemm(&kn.kernel, p.tA, p.tB, p.m, p.n, p.k, p.alpha, a, p.lda, b, p.ldb, p.beta, got, p.ldc, true)
				t.Run(p.String(), func(t *testing.T) { compare(t, p, a, b, c0, got, 1e-12) })
			}
		})
	}
}

// TestSgemm compares every float32 kernel with gonum's reference Dgemm on
// the same (float32) inputs; relative tolerance 1e-5.
func TestSgemm(t *testing.T) {
	for _, kn := range testKernels(kernels32) {
		t.Run(kn.String(), func(t *testing.T) {
			rng := rand.New(rand.NewPCG(19, 2))
			for _, p := range products() {
				a, b, c0 := p.inputs(rng)
				a32, b32, c32 := to32(a), to32(b), to32(c0)
				a, b, c0 = to64(a32), to64(b32), to64(c32)
				gemm(&kn.kernel, p.tA, p.tB, p.m, p.n, p.k, float32(p.alpha), a32, p.lda, b32, p.ldb, float32(p.beta), c32, p.ldc, true)
				t.Run(p.String(), func(t *testing.T) { compare(t, p, a, b, c0, to64(c32), 1e-5) })
			}
		})
	}
}

// TestLarge checks products larger than the blocks of the kernels in use
// and than SerialBelow (so split over goroutines when GOMAXPROCS > 1), and
// that they are the same bits as Serial's, on one goroutine.
func TestLarge(t *testing.T) {
	for _, p := range []product{
		{m: 301, n: 150, k: 300, alpha: 1, beta: 0},
		{tA: true, tB: true, m: 97, n: 2100, k: 40, alpha: -1, beta: 0.5},
		{tB: true, m: 150, n: 170, k: 520, alpha: 2, beta: 1},
	} {
		p.lda, p.ldb, p.ldc = p.k, p.n, p.n
		if p.tA {
			p.lda = p.m
		}
		if p.tB {
			p.ldb = p.k
		}
		t.Run(p.String(), func(t *testing.T) {
			rng := rand.New(rand.NewPCG(19, 3))
			a, b, c0 := p.inputs(rng)
			got := slices.Clone(c0)
			Implementation{}.Dgemm(trans(p.tA), trans(p.tB), p.m, p.n, p.k, p.alpha, a, p.lda, b, p.ldb, p.beta, got, p.ldc)
			compare(t, p, a, b, c0, got, 1e-12)

			one := slices.Clone(c0)
			Serial{}.Dgemm(trans(p.tA), trans(p.tB), p.m, p.n, p.k, p.alpha, a, p.lda, b, p.ldb, p.beta, one, p.ldc)
			for i := range got {
				if !sameBits(got[i], one[i]) {
					t.Fatalf("C[%d] = %v split over goroutines, %v on one", i, got[i], one[i])
				}
			}

			a32, b32, c32 := to32(a), to32(b), to32(c0)
			Implementation{}.Sgemm(trans(p.tA), trans(p.tB), p.m, p.n, p.k, float32(p.alpha), a32, p.lda, b32, p.ldb, float32(p.beta), c32, p.ldc)
			compare(t, p, to64(a32), to64(b32), to64(to32(c0)), to64(c32), 1e-5)
		})
	}
}

// TestNumpyProducts checks Dgemm and Sgemm against products computed by
// numpy (testdata/numpy_products.py).
func TestNumpyProducts(t *testing.T) {
	raw, err := os.ReadFile("testdata/numpy_products.json")
	if err != nil {
		t.Fatal(err)
	}
	var fixture struct {
		Cases []struct {
			Name           string
			M, N, K        int
			TransA, TransB bool
			Alpha, Beta    float64
			A, B, C0, C    []float64
		}
	}
	if err := json.Unmarshal(raw, &fixture); err != nil {
		t.Fatalf("testdata/numpy_products.json: %v", err)
	}
	for _, f := range fixture.Cases {
		lda, ldb := f.K, f.N
		if f.TransA {
			lda = f.M
		}
		if f.TransB {
			ldb = f.K
		}
		got := slices.Clone(f.C0)
		Implementation{}.Dgemm(trans(f.TransA), trans(f.TransB), f.M, f.N, f.K, f.Alpha, f.A, lda, f.B, ldb, f.Beta, got, f.N)
		got32 := to32(f.C0)
		Implementation{}.Sgemm(trans(f.TransA), trans(f.TransB), f.M, f.N, f.K, float32(f.Alpha), to32(f.A), lda, to32(f.B), ldb, float32(f.Beta), got32, f.N)
		for i, want := range f.C {
			// numpy's float64 product; scale of the terms: |values| ≲ 4,
			// k ≤ 67, so |C| and the sums of |a||b| are at most a few
			// hundred.
			if math.Abs(got[i]-want) > 1e-12*(1+math.Abs(want))*float64(f.K) {
				t.Errorf("%s: Dgemm C[%d] = %v, numpy %v", f.Name, i, got[i], want)
			}
			if math.Abs(float64(got32[i])-want) > 1e-5*(1+math.Abs(want))*float64(f.K) {
				t.Errorf("%s: Sgemm C[%d] = %v, numpy %v", f.Name, i, got32[i], want)
			}
		}
	}
}

// TestPanics checks that bad arguments panic with gonum's own messages.
func TestPanics(t *testing.T) {
	s := make([]float64, 100)
	for _, tc := range []struct {
		name          string
		tA, tB        blas.Transpose
		m, n, k       int
		lda, ldb, ldc int
		a, b, c       []float64
	}{
		{"transpose", 'x', blas.NoTrans, 2, 2, 2, 2, 2, 2, s, s, s},
		{"m", blas.NoTrans, blas.NoTrans, -1, 2, 2, 2, 2, 2, s, s, s},
		{"k", blas.NoTrans, blas.NoTrans, 2, 2, -1, 2, 2, 2, s, s, s},
		{"lda", blas.NoTrans, blas.NoTrans, 2, 2, 3, 2, 2, 2, s, s, s},
		{"ldb", blas.NoTrans, blas.Trans, 2, 2, 3, 3, 2, 2, s, s, s},
		{"ldc", blas.NoTrans, blas.NoTrans, 2, 3, 2, 2, 3, 2, s, s, s},
		{"short a", blas.Trans, blas.NoTrans, 4, 2, 3, 4, 2, 2, s[:11], s, s},
		{"short b", blas.NoTrans, blas.NoTrans, 4, 2, 3, 3, 2, 2, s, s[:5], s},
		{"short c", blas.NoTrans, blas.NoTrans, 4, 2, 3, 3, 2, 2, s, s, s[:7]},
	} {
		t.Run(tc.name, func(t *testing.T) {
			msg := func(f func()) (p any) {
				defer func() { p = recover() }()
				f()
				return nil
			}
			want := msg(func() {
				gonum.Implementation{}.Dgemm(tc.tA, tc.tB, tc.m, tc.n, tc.k, 1, tc.a, tc.lda, tc.b, tc.ldb, 0, tc.c, tc.ldc)
			})
			got := msg(func() {
				Implementation{}.Dgemm(tc.tA, tc.tB, tc.m, tc.n, tc.k, 1, tc.a, tc.lda, tc.b, tc.ldb, 0, tc.c, tc.ldc)
			})
			if want == nil || got != want {
				t.Errorf("panic %v, gonum's %v", got, want)
			}
		})
	}
}

// TestSerialAllocatesNothing checks that a product below SerialBelow
// allocates nothing once the buffers are pooled.
func TestSerialAllocatesNothing(t *testing.T) {
	a, b, c := make([]float32, 64*200), make([]float32, 200*96), make([]float32, 64*96)
	f := func() { Implementation{}.Sgemm(blas.NoTrans, blas.NoTrans, 64, 96, 200, 1, a, 200, b, 96, 0, c, 96) }
	f()
	if n := testing.AllocsPerRun(20, f); n != 0 {
		t.Errorf("Sgemm allocates %v times", n)
	}
}

// testKernel is a kernel under test, with its name.
type testKernel[T float] struct {
	kernel[T]
	tiny bool
}

func (k testKernel[T]) String() string {
	if k.tiny {
		return k.name + "/tiny-blocks"
	}
	return k.name
}

// testKernels returns every kernel of ks and a copy of each with blocks of
// a few tiles (mc 2 tiles, kc 5 steps, nc 3 tiles).
func testKernels[T float](ks []kernel[T]) []testKernel[T] {
	var r []testKernel[T]
	for _, k := range ks {
		r = append(r, testKernel[T]{kernel: k})
		k.mc, k.kc, k.nc = 2*k.mr, 5, 3*k.nr
		r = append(r, testKernel[T]{kernel: k, tiny: true})
	}
	return r
}

func to32(s []float64) []float32 {
	r := make([]float32, len(s))
	for i, v := range s {
		r[i] = float32(v)
	}
	return r
}

func to64(s []float32) []float64 {
	r := make([]float64, len(s))
	for i, v := range s {
		r[i] = float64(v)
	}
	return r
}

// TestKernelInUse logs the micro-kernel in use ("kernel: avx2" or
// "kernel: go"), which .ci/run checks on processors with AVX2 and FMA.
func TestKernelInUse(t *testing.T) {
	k := Kernel()
	if k != "avx2" && k != "go" {
		t.Fatalf("Kernel() = %q", k)
	}
	t.Logf("kernel: %s", k)
}

// TestKernelsSameBits checks that every float32 kernel with the AVX2
// kernel's blocking along k gives the AVX2 kernel's bits: each element is
// the same chain of fused multiply-adds whatever the width of the tile
// (common practice, no source: IEEE 754 fused multiply-add rounds once).
func TestKernelsSameBits(t *testing.T) {
	var ref *kernel[float32]
	for i := range kernels32 {
		if kernels32[i].name == "avx2" {
			ref = &kernels32[i]
		}
	}
	if ref == nil {
		t.Skip("no AVX2 kernel on this processor")
	}
	for _, kn := range kernels32 {
		if kn.name == "go" || kn.kc != ref.kc {
			continue
		}
		t.Run(kn.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(19, 3))
			for _, p := range append(products(), product{m: 116, n: 464, k: 600, lda: 600, ldb: 464, ldc: 464, alpha: 1}) {
				a, b, c0 := p.inputs(rng)
				a32, b32 := to32(a), to32(b)
				want, got := to32(c0), to32(c0)
				gemm(ref, p.tA, p.tB, p.m, p.n, p.k, float32(p.alpha), a32, p.lda, b32, p.ldb, float32(p.beta), want, p.ldc, false)
				gemm(&kn, p.tA, p.tB, p.m, p.n, p.k, float32(p.alpha), a32, p.lda, b32, p.ldb, float32(p.beta), got, p.ldc, false)
				for i := range want {
					if math.Float32bits(want[i]) != math.Float32bits(got[i]) && !(math.IsNaN(float64(want[i])) && math.IsNaN(float64(got[i]))) {
						t.Fatalf("%v: element %d: %v, the AVX2 kernel %v", p, i, got[i], want[i])
					}
				}
			}
		})
	}
}
