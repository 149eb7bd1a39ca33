package blas

import (
	"testing"

	gonumblas "gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
)

// TestDgemm checks the selected BLAS on a product worked by hand:
// [1 2; 3 4]·[5 6; 7 8] = [19 22; 43 50].
func TestDgemm(t *testing.T) {
	a := blas64.General{Rows: 2, Cols: 2, Stride: 2, Data: []float64{1, 2, 3, 4}}
	b := blas64.General{Rows: 2, Cols: 2, Stride: 2, Data: []float64{5, 6, 7, 8}}
	c := blas64.General{Rows: 2, Cols: 2, Stride: 2, Data: make([]float64, 4)}
	blas64.Gemm(gonumblas.NoTrans, gonumblas.NoTrans, 1, a, b, 0, c)
	want := []float64{19, 22, 43, 50}
	for i := range want {
		if c.Data[i] != want[i] {
			t.Fatalf("%s: got %v, want %v", Name(), c.Data, want)
		}
	}
	t.Logf("BLAS in use: %s", Name())
}
