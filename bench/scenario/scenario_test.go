package scenario

import (
	"context"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

// TestMatrices: every functional matrix is the Fisher z of a valid
// correlation matrix (symmetric, zero diagonal as stored, and tanh of it
// with a unit diagonal positive semidefinite) and every structural matrix
// is symmetric, non-negative, zero on the diagonal and a log1p of whole
// counts. These are the definitions of the two matrices (common practice,
// no source).
func TestMatrices(t *testing.T) {
	sc, err := Generate(Null, Config{N: 20, P: 15, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	for _, part := range sc.Cohort.Participants {
		f, s := part.Functional, part.Structural
		p, _ := f.Dims()
		r := mat.NewSymDense(p, nil)
		for i := range p {
			if f.At(i, i) != 0 || s.At(i, i) != 0 {
				t.Fatalf("%s: diagonal not zero", part.ID)
			}
			r.SetSym(i, i, 1)
			for j := range p {
				if f.At(i, j) != f.At(j, i) || s.At(i, j) != s.At(j, i) {
					t.Fatalf("%s: not symmetric at %d,%d", part.ID, i, j)
				}
				if c := math.Expm1(s.At(i, j)); s.At(i, j) < 0 || math.Abs(c-math.Round(c)) > 1e-9 {
					t.Fatalf("%s: structural %d,%d = %g is not log1p of a count", part.ID, i, j, s.At(i, j))
				}
				if j > i {
					r.SetSym(i, j, math.Tanh(f.At(i, j)))
				}
			}
		}
		var eig mat.EigenSym
		if !eig.Factorize(r, false) {
			t.Fatal("eigendecomposition failed")
		}
		if v := eig.Values(nil)[0]; v < -1e-9 {
			t.Fatalf("%s: correlation matrix has eigenvalue %g < 0", part.ID, v)
		}
	}
}

// TestOracle: for every kind, the correlation between the noiseless and
// the observed score is the generator's oracle r within sampling error:
// |atanh(r̂) − atanh(ρ)| < 4/sqrt(N − 3), the standard error of Fisher's z
// of a sample correlation being 1/sqrt(N − 3) (Fisher 1921; common
// practice). For the null kind, whose noiseless score is 0, the observed
// score is checked against the fc-linear truth of the same connectomes
// (same seed, so the same matrices), with ρ = 0.
func TestOracle(t *testing.T) {
	const n = 400
	cfg := Config{N: n, P: 16, T: 60, Oracle: 0.7, Seed: 5}
	tol := 4 / math.Sqrt(n-3)
	for _, k := range Kinds {
		t.Run(string(k), func(t *testing.T) {
			sc, err := Generate(k, cfg)
			if err != nil {
				t.Fatal(err)
			}
			g := sc.Noiseless
			if k == Null {
				lin, err := Generate(FCLinear, cfg)
				if err != nil {
					t.Fatal(err)
				}
				g = lin.Noiseless
			}
			y := make([]float64, n)
			for i, p := range sc.Cohort.Participants {
				y[i] = p.Scores[0]
			}
			r := stat.Correlation(g, y, nil)
			if d := math.Abs(math.Atanh(r) - math.Atanh(sc.Oracle)); !(d < tol) {
				t.Errorf("r(noiseless, observed) = %.3f, oracle %.3f: Fisher-z gap %.3f ≥ %.3f", r, sc.Oracle, d, tol)
			}
		})
	}
}

// TestRidgeRecovers: the linear truths are learnable: ridge on the
// matrix that carries the truth, cross-validated (5 folds), reaches a
// pooled r well above chance, and stays near chance on the null cohort.
// Chance: under the null a cross-validated r has SD about 1/sqrt(N)
// (common practice, no source), 0.06 at N = 300, so 0.25 is four SDs
// away. A sanity check of the generator, not of skein.
func TestRidgeRecovers(t *testing.T) {
	if testing.Short() {
		t.Skip("-short: cross-validates ridge on three cohorts")
	}
	cases := []struct {
		kind  Kind
		input linear.Input
		above bool
	}{
		{FCLinear, "functional", true},
		{SCLinear, "structural", true},
		{Null, "both", false},
	}
	for _, c := range cases {
		t.Run(string(c.kind), func(t *testing.T) {
			sc, err := Generate(c.kind, Config{N: 300, P: 24, T: 100, Oracle: 0.8, Seed: 9})
			if err != nil {
				t.Fatal(err)
			}
			d := &train.Design{Seed: 1, CV: train.CV{Folds: new(5), Repeats: new(1)},
				Models: []train.ModelConfig{{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{Input: c.input}}}}}
			d.SetDefaults()
			res, err := (&train.Runner{Design: d, Cohort: sc.Cohort}).Run(context.Background())
			if err != nil {
				t.Fatal(err)
			}
			r := eval.Summarize(res.Predictions, 0, false).Group("ridge", "score").Pooled.PearsonWithin
			t.Logf("%s: ridge r = %.3f (oracle %.2f)", c.kind, r, sc.Oracle)
			if c.above && !(r > 0.25) {
				t.Errorf("ridge r = %.3f, want > 0.25", r)
			}
			if !c.above && !(math.Abs(r) < 0.25) {
				t.Errorf("ridge r = %.3f on the null, want |r| < 0.25", r)
			}
		})
	}
}

// TestGenerateErrors: a configuration that cannot work is an error naming
// what is wrong.
func TestGenerateErrors(t *testing.T) {
	tests := []struct {
		kind   Kind
		cfg    Config
		errHas string
	}{
		{"linear", Config{N: 50, P: 20}, "unknown kind"},
		{FCLinear, Config{N: 10, P: 20}, "N ≥ 20"},
		{FCLinear, Config{N: 50, P: 8}, "P ≥ 12"},
		{FCLinear, Config{N: 50, P: 20, T: 20}, "must exceed P"},
		{FCLinear, Config{N: 50, P: 20, Oracle: 1.5}, "oracle r"},
	}
	for _, tc := range tests {
		_, err := Generate(tc.kind, tc.cfg)
		if err == nil || !strings.Contains(err.Error(), tc.errHas) {
			t.Errorf("Generate(%q, %+v): err = %v, want one naming %q", tc.kind, tc.cfg, err, tc.errHas)
		}
	}
}
