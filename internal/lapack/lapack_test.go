package lapack

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestReduce checks the defining identities of the reduction on random
// symmetric matrices (Golub & Van Loan, §8.3.1): Q is orthogonal,
// Qᵀ·A·Q = T, and MulQ agrees with the explicit Q both ways.
func TestReduce(t *testing.T) {
	for _, n := range []int{1, 2, 3, 7, 40, 130} {
		rng := rand.New(rand.NewPCG(uint64(n), 3))
		lda := n + 2
		a := make([]float64, n*lda)
		orig := make([]float64, n*n)
		for i := 0; i < n; i++ {
			for j := 0; j <= i; j++ {
				v := rng.NormFloat64()
				a[i*lda+j], a[j*lda+i] = v, v
				orig[i*n+j], orig[j*n+i] = v, v
			}
		}
		tri := Reduce(n, a, lda)
		q := tri.Q()
		tol := 1e-12 * float64(n)
		// QᵀQ = I.
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				var s float64
				for k := 0; k < n; k++ {
					s += q[k*n+i] * q[k*n+j]
				}
				if want := b2f(i == j); math.Abs(s-want) > tol {
					t.Fatalf("%s n=%d: (QᵀQ)[%d,%d] = %g", Name, n, i, j, s)
				}
			}
		}
		// QᵀAQ = T, with MulQ(trans) for Qᵀ·A and the explicit Q on the right.
		qa := append([]float64(nil), orig...)
		tri.MulQ(true, n, qa, n)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				var s float64
				for k := 0; k < n; k++ {
					s += qa[i*n+k] * q[k*n+j]
				}
				var want float64
				switch {
				case i == j:
					want = tri.D[i]
				case j == i+1:
					want = tri.E[i]
				case i == j+1:
					want = tri.E[j]
				}
				if math.Abs(s-want) > tol*10 {
					t.Fatalf("%s n=%d: (QᵀAQ)[%d,%d] = %g, want %g", Name, n, i, j, s, want)
				}
			}
		}
		// MulQ(false) on the identity gives Q.
		id := make([]float64, n*(n+1))
		for i := 0; i < n; i++ {
			id[i*(n+1)+i] = 1
		}
		tri.MulQ(false, n, id, n+1)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				if math.Abs(id[i*(n+1)+j]-q[i*n+j]) > tol {
					t.Fatalf("%s n=%d: MulQ(I)[%d,%d] = %g, Q has %g", Name, n, i, j, id[i*(n+1)+j], q[i*n+j])
				}
			}
		}
	}
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}
