package train

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestTargetPrepAgainstNumPy checks confound regression and standardization
// fitted on training rows against numpy.linalg.lstsq and numpy's std with
// ddof=1 (testdata/train/make_targetprep.py, Debian's python3-numpy).
func TestTargetPrepAgainstNumPy(t *testing.T) {
	fx := readTargetPrepFixture(t, "targetprep.json")
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

// TestTargetPrepBlocks checks a TargetPrep fitted in blocks, as a chunk of
// permutations is fitted, two ways: against numpy.linalg.lstsq fitted per
// score column on its own block's confounds
// (testdata/train/make_targetprep_blocks.py, Debian's python3-numpy), and
// against one FitTargetPrep per block, to 1e-12.
func TestTargetPrepBlocks(t *testing.T) {
	fx := readTargetPrepFixture(t, "targetprep_blocks.json")
	n, TB, CB, B := len(fx.Y), len(fx.Y[0]), len(fx.Cov[0]), fx.Blocks
	T, C := TB/B, CB/B
	y := mat.NewDense(n, TB, nil)
	cov := mat.NewDense(n, CB, nil)
	for i := range fx.Y {
		for tgt, v := range fx.Y[i] {
			y.Set(i, tgt, math.NaN())
			if v != nil {
				y.Set(i, tgt, *v)
			}
		}
		cov.SetRow(i, fx.Cov[i])
	}
	tp, err := FitTargetPrepBlocks(y, cov, fx.Train, B)
	if err != nil {
		t.Fatal(err)
	}
	z := tp.Standardized(y, cov, fx.Test)
	obs := tp.Observed(y, cov, fx.Test)

	// numpy, per score column.
	const tol = 1e-10
	for tgt := range TB {
		for k, want := range fx.Expect.Beta[tgt] {
			if got := tp.Confounds.At(k, tgt); math.Abs(got-want) > tol*math.Max(1, math.Abs(want)) {
				t.Errorf("column %d: beta[%d] = %v, numpy %v", tgt, k, got, want)
			}
		}
		if math.Abs(tp.Mean[tgt]-fx.Expect.Mean[tgt]) > tol || math.Abs(tp.SD[tgt]-fx.Expect.SD[tgt]) > tol {
			t.Errorf("column %d: mean, sd = %v, %v; numpy %v, %v", tgt, tp.Mean[tgt], tp.SD[tgt], fx.Expect.Mean[tgt], fx.Expect.SD[tgt])
		}
		for r := range fx.Test {
			want, got := fx.Expect.StandardizedTest[tgt][r], z.At(r, tgt)
			switch {
			case want == nil && !math.IsNaN(got):
				t.Errorf("test row %d column %d: got %v for a missing score", r, tgt, got)
			case want != nil && math.Abs(got-*want) > tol:
				t.Errorf("test row %d column %d: %v, numpy %v", r, tgt, got, *want)
			}
		}
	}

	// One single-block fit per block.
	const same = 1e-12
	close := func(a, b float64) bool {
		return (math.IsNaN(a) && math.IsNaN(b)) || math.Abs(a-b) <= same*math.Max(1, math.Abs(b))
	}
	for b := range B {
		yb := mat.DenseCopyOf(y.Slice(0, n, b*T, (b+1)*T))
		cb := mat.DenseCopyOf(cov.Slice(0, n, b*C, (b+1)*C))
		one, err := FitTargetPrep(yb, cb, fx.Train)
		if err != nil {
			t.Fatal(err)
		}
		zb, ob := one.Standardized(yb, cb, fx.Test), one.Observed(yb, cb, fx.Test)
		for c := range C {
			if !close(tp.CovariateMean[b*C+c], one.CovariateMean[c]) {
				t.Errorf("block %d: covariate mean %d = %v, alone %v", b, c, tp.CovariateMean[b*C+c], one.CovariateMean[c])
			}
		}
		for tgt := range T {
			col := b*T + tgt
			for k := range 1 + C {
				if !close(tp.Confounds.At(k, col), one.Confounds.At(k, tgt)) {
					t.Errorf("block %d target %d: beta[%d] = %v, alone %v", b, tgt, k, tp.Confounds.At(k, col), one.Confounds.At(k, tgt))
				}
			}
			if !close(tp.Mean[col], one.Mean[tgt]) || !close(tp.SD[col], one.SD[tgt]) {
				t.Errorf("block %d target %d: mean, sd = %v, %v; alone %v, %v", b, tgt, tp.Mean[col], tp.SD[col], one.Mean[tgt], one.SD[tgt])
			}
			for r := range fx.Test {
				if !close(z.At(r, col), zb.At(r, tgt)) || !close(obs.At(r, col), ob.At(r, tgt)) {
					t.Errorf("block %d target %d test row %d: %v, %v; alone %v, %v", b, tgt, r, z.At(r, col), obs.At(r, col), zb.At(r, tgt), ob.At(r, tgt))
				}
			}
		}
	}
}

// TestTargetPrepBlocksBadShape: columns that do not split into the blocks
// are an error.
func TestTargetPrepBlocksBadShape(t *testing.T) {
	rows := []int{0, 1, 2, 3, 4, 5}
	y := mat.NewDense(6, 4, nil)
	for i := range 6 {
		y.SetRow(i, []float64{float64(i), float64(i * i), 1 - float64(i), float64(i % 3)})
	}
	tests := []struct {
		name   string
		cov    *mat.Dense
		blocks int
	}{
		{"scores", nil, 3},
		{"no blocks", nil, 0},
		{"confounds", mat.NewDense(6, 3, nil), 2},
	}
	for _, tt := range tests {
		if _, err := FitTargetPrepBlocks(y, tt.cov, rows, tt.blocks); err == nil {
			t.Errorf("%s: no error", tt.name)
		}
	}
}

// targetPrepFixture is a fixture of confound regression and standardization
// written by testdata/train/make_targetprep.py or make_targetprep_blocks.py
// (blocks 0 means one block).
type targetPrepFixture struct {
	Blocks int          `json:"blocks"`
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

// readTargetPrepFixture reads the fixture testdata/train/NAME.
func readTargetPrepFixture(t *testing.T, name string) targetPrepFixture {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("..", "testdata", "train", name))
	if err != nil {
		t.Fatal(err)
	}
	var fx targetPrepFixture
	if err := json.Unmarshal(raw, &fx); err != nil {
		t.Fatal(err)
	}
	return fx
}
