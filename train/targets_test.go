package train

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestTargetPrepAgainstNumPy checks confound regression and standardization
// fitted on training rows against numpy.linalg.lstsq and numpy's std with
// ddof=1 (testdata/train/make_targetprep.py, Debian's python3-numpy).
func TestTargetPrepAgainstNumPy(t *testing.T) {
	raw, err := os.ReadFile("../testdata/train/targetprep.json")
	if err != nil {
		t.Fatal(err)
	}
	var fx struct {
		Y      [][]*float64 `json:"y"`
		Cov    [][]float64  `json:"cov"`
		Train  []int        `json:"train"`
		Test   []int        `json:"test"`
		Expect struct {
			Beta             [][]float64  `json:"beta"`
			Mean             []float64    `json:"mean"`
			SD               []float64    `json:"sd"`
			StandardizedTest [][]*float64 `json:"standardized_test"`
		} `json:"expect"`
	}
	if err := json.Unmarshal(raw, &fx); err != nil {
		t.Fatal(err)
	}
	n := len(fx.Y)
	y := mat.NewDense(n, 2, nil)
	cov := mat.NewDense(n, 2, nil)
	for i := range fx.Y {
		for t := 0; t < 2; t++ {
			v := math.NaN()
			if fx.Y[i][t] != nil {
				v = *fx.Y[i][t]
			}
			y.Set(i, t, v)
		}
		cov.SetRow(i, fx.Cov[i])
	}
	tp, err := FitTargetPrep(y, cov, fx.Train)
	if err != nil {
		t.Fatal(err)
	}
	const tol = 1e-10
	for tgt := 0; tgt < 2; tgt++ {
		for k, want := range fx.Expect.Beta[tgt] {
			if got := tp.Confounds.At(k, tgt); math.Abs(got-want) > tol*math.Max(1, math.Abs(want)) {
				t.Errorf("target %d: beta[%d] = %v, numpy %v", tgt, k, got, want)
			}
		}
		if math.Abs(tp.Mean[tgt]-fx.Expect.Mean[tgt]) > tol || math.Abs(tp.SD[tgt]-fx.Expect.SD[tgt]) > tol {
			t.Errorf("target %d: mean, sd = %v, %v; numpy %v, %v", tgt, tp.Mean[tgt], tp.SD[tgt], fx.Expect.Mean[tgt], fx.Expect.SD[tgt])
		}
	}
	z := tp.Standardized(y, cov, fx.Test)
	for r := range fx.Test {
		for tgt := 0; tgt < 2; tgt++ {
			want := fx.Expect.StandardizedTest[tgt][r]
			got := z.At(r, tgt)
			if want == nil {
				if !math.IsNaN(got) {
					t.Errorf("test row %d target %d: got %v for a missing score", r, tgt, got)
				}
				continue
			}
			if math.Abs(got-*want) > tol {
				t.Errorf("test row %d target %d: %v, numpy %v", r, tgt, got, *want)
			}
		}
	}
}
