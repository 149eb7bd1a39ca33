package connectivity

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// fixture is testdata/estimators.json, written by
// testdata/make_estimators.py with Debian's numpy, scipy and scikit-learn.
type fixture struct {
	Series              [][][]float64 `json:"series"`
	Short               [][]float64   `json:"short"`
	Covariance          [][][]float64 `json:"covariance"`
	Correlation         [][][]float64 `json:"correlation"`
	Partial             [][][]float64 `json:"partial"`
	LedoitWolf          [][][]float64 `json:"ledoit_wolf"`
	Shrinkage           []float64     `json:"shrinkage"`
	LogEuclideanMean    [][]float64   `json:"log_euclidean_mean"`
	GeometricMean       [][]float64   `json:"geometric_mean"`
	TangentLogEuclidean [][][]float64 `json:"tangent_log_euclidean"`
	TangentGeometric    [][][]float64 `json:"tangent_geometric"`
	VectorKeep          []float64     `json:"vector_keep"`
	VectorDrop          []float64     `json:"vector_drop"`
}

func readFixture(t *testing.T) fixture {
	t.Helper()
	raw, err := os.ReadFile("testdata/estimators.json")
	if err != nil {
		t.Fatal(err)
	}
	var fx fixture
	if err := json.Unmarshal(raw, &fx); err != nil {
		t.Fatal(err)
	}
	return fx
}

func dense(rows [][]float64) *mat.Dense {
	m := mat.NewDense(len(rows), len(rows[0]), nil)
	for i, r := range rows {
		m.SetRow(i, r)
	}
	return m
}

func sym(rows [][]float64) *mat.SymDense {
	p := len(rows)
	s := mat.NewSymDense(p, nil)
	for i := range p {
		for j := i; j < p; j++ {
			s.SetSym(i, j, rows[i][j])
		}
	}
	return s
}

func near(t *testing.T, what string, got mat.Matrix, want [][]float64, tol float64) {
	t.Helper()
	r, c := got.Dims()
	if r != len(want) || c != len(want[0]) {
		t.Fatalf("%s: %d × %d, want %d × %d", what, r, c, len(want), len(want[0]))
	}
	for i := range r {
		for j := range c {
			if d := math.Abs(got.At(i, j) - want[i][j]); d > tol*math.Max(1, math.Abs(want[i][j])) {
				t.Fatalf("%s: entry (%d, %d) = %.15g, want %.15g", what, i, j, got.At(i, j), want[i][j])
			}
		}
	}
}

// TestPerParticipant checks the estimators of one participant against
// numpy.cov(bias=True), numpy.corrcoef, the inverse by numpy.linalg.inv
// (partial correlation) and sklearn.covariance.ledoit_wolf.
func TestPerParticipant(t *testing.T) {
	fx := readFixture(t)
	for i, x := range fx.Series {
		s := Covariance(dense(x))
		near(t, "covariance (numpy.cov bias=True)", s, fx.Covariance[i], 1e-12)
		r, err := Correlation(s)
		if err != nil {
			t.Fatal(err)
		}
		near(t, "correlation (numpy.corrcoef)", r, fx.Correlation[i], 1e-12)
		pc, err := PartialCorrelation(s)
		if err != nil {
			t.Fatal(err)
		}
		near(t, "partial correlation (numpy.linalg.inv)", pc, fx.Partial[i], 1e-10)
	}
	for i, x := range append(fx.Series, fx.Short) {
		lw, delta := LedoitWolf(dense(x))
		near(t, "Ledoit–Wolf covariance (sklearn ledoit_wolf)", lw, fx.LedoitWolf[i], 1e-12)
		if math.Abs(delta-fx.Shrinkage[i]) > 1e-12 {
			t.Errorf("series %d: shrinkage %.15g, sklearn ledoit_wolf %.15g", i, delta, fx.Shrinkage[i])
		}
	}
}

// TestErrors: a constant region and a singular covariance are errors
// that say what is wrong (common practice, no source).
func TestErrors(t *testing.T) {
	fx := readFixture(t)
	tests := []struct {
		name string
		run  func() error
		want func(error) bool
	}{
		{"constant region", func() error {
			x := dense(fx.Series[0])
			for t := range len(fx.Series[0]) {
				x.Set(t, 2, 1.5)
			}
			_, err := Correlation(Covariance(x))
			return err
		}, func(err error) bool { var v *VarianceError; return errors.As(err, &v) && v.Region == 2 }},
		{"T < p, partial", func() error {
			_, err := PartialCorrelation(Covariance(dense(fx.Short)))
			return err
		}, func(err error) bool { return errors.Is(err, ErrNotPositiveDefinite) }},
		{"T < p, tangent", func() error {
			w, err := InvSqrtm(sym(fx.Covariance[0]))
			if err != nil {
				return nil
			}
			_, err = Tangent(Covariance(dense(fx.Short)), w)
			return err
		}, func(err error) bool { return errors.Is(err, ErrNotPositiveDefinite) }},
		{"T < p, shrunk, partial is fine", func() error {
			lw, _ := LedoitWolf(dense(fx.Short))
			_, err := PartialCorrelation(lw)
			if err != nil {
				return err
			}
			return errors.New("ok")
		}, func(err error) bool { return err.Error() == "ok" }},
	}
	for _, tc := range tests {
		if err := tc.run(); err == nil || !tc.want(err) {
			t.Errorf("%s: error %v", tc.name, err)
		}
	}
}

// TestTangent checks both reference means and the tangent coordinates
// against scipy.linalg.logm / sqrtm / expm (make_estimators.py: the
// geometric mean by the unit-step fixed-point iteration from the
// arithmetic mean), and Vectorize against the script's vectorisation.
func TestTangent(t *testing.T) {
	fx := readFixture(t)
	covs := make([]mat.Symmetric, len(fx.Covariance))
	for i, c := range fx.Covariance {
		covs[i] = sym(c)
	}
	le, err := LogEuclideanMean(covs)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "log-Euclidean mean (scipy expm/logm)", le, fx.LogEuclideanMean, 1e-10)
	gm, iters, err := GeometricMean(covs, GeometricOptions{Tol: 1e-12, MaxIter: 200})
	if err != nil {
		t.Fatal(err)
	}
	near(t, "geometric mean (fixed point, scipy)", gm, fx.GeometricMean, 1e-9)
	t.Logf("geometric mean: %d iterations", iters)
	tests := []struct {
		name string
		ref  *mat.SymDense
		want [][][]float64
	}{
		{"log-Euclidean", le, fx.TangentLogEuclidean},
		{"geometric", gm, fx.TangentGeometric},
	}
	for _, tc := range tests {
		w, err := InvSqrtm(tc.ref)
		if err != nil {
			t.Fatal(err)
		}
		for i, c := range covs {
			tg, err := Tangent(c, w)
			if err != nil {
				t.Fatal(err)
			}
			near(t, tc.name+" tangent (scipy logm)", tg, tc.want[i], 1e-8)
			if i == 0 && tc.name == "geometric" {
				for _, v := range []struct {
					keep bool
					want []float64
				}{{true, fx.VectorKeep}, {false, fx.VectorDrop}} {
					near(t, "vectorisation", mat.NewDense(1, len(v.want), Vectorize(tg, v.keep)), [][]float64{v.want}, 1e-8)
				}
			}
		}
	}
	// The tangent coordinates at the geometric mean average to zero: the
	// mean's defining property (Pennec et al. 2006, eq. 7).
	w, _ := InvSqrtm(gm)
	sum := mat.NewSymDense(gm.SymmetricDim(), nil)
	for _, c := range covs {
		tg, _ := Tangent(c, w)
		sum.AddSym(sum, tg)
	}
	if n := mat.Norm(sum, 2); n > 1e-8 {
		t.Errorf("sum of tangent coordinates at the geometric mean has norm %g, want 0", n)
	}
}
