package linear

import (
	"context"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/model"
)

// TestTridiagonalMatchesSpectrum checks the tridiagonal route against the
// eigendecomposition on centred kernels K = XXᵀ (rank at most n − 1, as
// every ridge kernel): both are (K + aI)⁻¹y for centred y, which the
// eigenvectors give as U diag(1/(λ + a)) Uᵀ y (Golub & Van Loan, Matrix
// Computations, 4th ed., §8.1; common practice, no source for the
// tolerance). The penalties per column differ, as after a choice.
func TestTridiagonalMatchesSpectrum(t *testing.T) {
	tests := []struct {
		n, d      int
		penalties []float64
	}{
		{5, 3, []float64{0.5, 2}},
		{30, 80, []float64{1e-3, 10}},
		{60, 40, []float64{0.1, 0.1}},
		{150, 300, []float64{50, 1e4}},
	}
	for _, tt := range tests {
		rng := rand.New(rand.NewPCG(uint64(tt.n), uint64(tt.d)))
		x := mat.NewDense(tt.n, tt.d, nil)
		for i := 0; i < tt.n; i++ {
			for k := 0; k < tt.d; k++ {
				x.Set(i, k, rng.NormFloat64()+float64(k%4))
			}
		}
		sc := fitScaler(denseRows{x}, seq(tt.n), true)
		xs := sc.applyRows(mat.NewDense(tt.n, tt.d, nil), denseRows{x}, seq(tt.n))
		k := mat.NewDense(tt.n, tt.n, nil)
		gram(k, xs)
		var full mat.Dense
		full.Mul(xs, xs.T())
		if !mat.EqualApprox(k, &full, 1e-12*mat.Norm(&full, 1)) {
			t.Fatalf("n=%d d=%d: gram differs from XXᵀ", tt.n, tt.d)
		}
		y := mat.NewDense(tt.n, len(tt.penalties), nil)
		for i := 0; i < tt.n; i++ {
			for j := range tt.penalties {
				y.Set(i, j, rng.NormFloat64())
			}
		}
		centreColumns(y)
		spec, err := dualSpectrum(k)
		if err != nil {
			t.Fatal(err)
		}
		want, err := spec.coefficients(spec.project(y), tt.penalties)
		if err != nil {
			t.Fatal(err)
		}
		tri := reduceKernel(mat.DenseCopyOf(k))
		got, err := tri.coefficients(tri.project(y), tt.penalties)
		if err != nil {
			t.Fatal(err)
		}
		// Compare fitted values Kα, which the null space of K does not reach.
		var kw, kg mat.Dense
		kw.Mul(k, want)
		kg.Mul(k, got)
		if !mat.EqualApprox(&kg, &kw, 1e-9*mat.Norm(&kw, 1)) {
			t.Errorf("n=%d d=%d penalties %v: tridiagonal fit differs from the eigendecomposition's", tt.n, tt.d, tt.penalties)
		}
	}
}

// TestRidgeWideY checks that a Y with more columns than participants (a
// permutation chunk, which Ridge predicts from its training edges and dual
// coefficients) predicts each column as a narrow Y (predicted from
// weights) does: the two are the same sums in another order (common
// practice, no source).
func TestRidgeWideY(t *testing.T) {
	const p, n, wide = 10, 20, 30 // 45 edges: the dual
	all := randomCohort(8, n+5, p, 1).Participants
	rng := rand.New(rand.NewPCG(8, 9))
	y := mat.NewDense(n, wide, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < wide; j++ {
			y.Set(i, j, rng.NormFloat64())
		}
	}
	for _, inner := range []InnerCV{InnerKFold, InnerLOO} {
		fit := func(cols int) *mat.Dense {
			cfg := Config{Ridge: &RidgeConfig{Inner: inner, InnerFolds: new(4)}}
			cfg.SetDefaults()
			reg, err := cfg.New(cols, 1)
			if err != nil {
				t.Fatal(err)
			}
			train := model.Dataset{Participants: all[:n], Y: y.Slice(0, n, 0, cols).(*mat.Dense)}
			if err := reg.Fit(context.Background(), train, model.Dataset{}); err != nil {
				t.Fatal(err)
			}
			pred, err := reg.Predict(all[n:])
			if err != nil {
				t.Fatal(err)
			}
			return pred
		}
		wideP, narrowP := fit(wide), fit(2)
		if !mat.EqualApprox(wideP.Slice(0, 5, 0, 2), narrowP, 1e-10) {
			t.Errorf("%s: wide Y predicts\n%v\nnarrow Y\n%v", inner, mat.Formatted(wideP.Slice(0, 5, 0, 2)), mat.Formatted(narrowP))
		}
	}
}
