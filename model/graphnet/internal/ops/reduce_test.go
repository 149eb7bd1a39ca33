package ops

import (
	"testing"

	"gorgonia.org/tensor"
)

// TestTensorInnerAxisSum documents an upstream bug and guards against
// depending on it. gorgonia.org/tensor v0.9.24's Sum along axis 2 of a 4-D
// tensor returns wrong values (found while building these ops; it
// silently corrupts the gradient of gorgonia's BroadcastAdd along such an
// axis). The E2E backward pass needs exactly that reduction (the column
// sums dC[n,o,j] = Σ_i dH[n,o,i,j]) and the row sums (axis 3); edgeSums
// computes both itself. The test checks edgeSums against a hand loop, and
// logs whether tensor.Sum still disagrees with it.
func TestTensorInnerAxisSum(t *testing.T) {
	const B, O, P = 2, 3, 4
	shape := []int{B, O, P, P}
	g := make([]float64, B*O*P*P)
	for i := range g {
		g[i] = float64(i * i % 17) // exact in float64: sums compare with ==
	}
	at := func(n, o, i, j int) float64 { return g[((n*O+o)*P+i)*P+j] }

	d := filterDims{B: B, O: O, P: P, C: 1}
	sums := make([]float64, 3*O*B*P)
	edgeSums(&tasks{}, d, g, nil, 0, sums)
	for n := 0; n < B; n++ {
		for o := 0; o < O; o++ {
			for k := 0; k < P; k++ {
				var row, col float64
				for m := 0; m < P; m++ {
					row += at(n, o, k, m)
					col += at(n, o, m, k)
				}
				if got := sums[(o*B+n)*P+k]; got != row {
					t.Errorf("row sum [%d,%d,%d] = %v, want %v", n, o, k, got, row)
				}
				if got := sums[d.termSize()+(o*B+n)*P+k]; got != col {
					t.Errorf("column sum [%d,%d,%d] = %v, want %v", n, o, k, got, col)
				}
				if got := sums[2*d.termSize()+(n*P+k)*O+o]; got != row {
					t.Errorf("transposed row sum [%d,%d,%d] = %v, want %v", n, k, o, got, row)
				}
			}
		}
	}

	// Upstream behaviour, logged only.
	x := tensor.New(tensor.WithShape(shape...), tensor.WithBacking(append([]float64(nil), g...)))
	s, err := tensor.Sum(x, 2)
	if err != nil {
		t.Logf("tensor.Sum(x, 2): %v", err)
		return
	}
	got := s.Data().([]float64)
	wrong := 0
	for n := 0; n < B; n++ {
		for o := 0; o < O; o++ {
			for j := 0; j < P; j++ {
				var col float64
				for i := 0; i < P; i++ {
					col += at(n, o, i, j)
				}
				if got[(n*O+o)*P+j] != col {
					wrong++
				}
			}
		}
	}
	if wrong > 0 {
		t.Logf("gorgonia.org/tensor Sum along axis 2 of a 4-D tensor: %d of %d values wrong (known upstream bug; ops do not use it)", wrong, len(got))
	} else {
		t.Logf("gorgonia.org/tensor Sum along axis 2 of a 4-D tensor agrees with the hand loop (upstream bug fixed?)")
	}
}
