package linear

import (
	"context"
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// TestRidgeLongley fits ridge with a zero penalty (least squares with an
// intercept) to the NIST StRD linear regression dataset "Longley" (higher
// difficulty) and checks each coefficient against NIST's certified value
// by its log relative error, LRE = −log10(|b − c|/|c|). The data and the
// certified values are in testdata/linear/longley.json, written by
// make_fixtures.py from memory and checked there against the copy of the
// data in Debian's python3-statsmodels. The six predictors become the six
// edges (upper triangle) of a 4 × 4 matrix, so the fit goes through the
// public Ridge path: z-scored edges, primal solution by SVD (16
// participants, 6 edges). Achieved: at least 13.3 digits on every
// coefficient on amd64; 11 are required, leaving a margin for other
// floating-point units.
func TestRidgeLongley(t *testing.T) {
	var longley struct {
		X         [][]float64 `json:"x"`
		Y         []float64   `json:"y"`
		Certified []float64   `json:"certified"`
	}
	readJSON(t, "longley.json", &longley)
	n := len(longley.Y)
	ps := make([]*data.Participant, n)
	for i, row := range longley.X {
		m := mat.NewDense(4, 4, nil)
		for k, v := range row {
			a, b := EdgePair(4, k)
			m.Set(a, b, v)
			m.Set(b, a, v)
		}
		ps[i] = &data.Participant{ID: fmt.Sprint(1947 + i), Functional: m}
	}
	r := NewRidge(RidgeConfig{Input: InputFunctional, Standardize: StandardizeZScore,
		Alphas: []float64{0}, AlphaScale: AlphaAbsolute, InnerFolds: new(5)}, 1)
	train := model.Dataset{Participants: ps, Y: mat.NewDense(n, 1, longley.Y)}
	if err := r.Fit(context.Background(), train, model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	got := append([]float64{r.Intercept()[0]}, mat.Col(nil, 0, r.Weights())...)
	const minDigits = 11
	for k, want := range longley.Certified {
		lre := -math.Log10(math.Abs(got[k]-want) / math.Abs(want))
		t.Logf("B%d = %.15g, certified %.15g, LRE %.1f", k, got[k], want, lre)
		if !(lre >= minDigits) {
			t.Errorf("B%d = %.15g, certified %.15g: %.1f correct digits, want at least %d", k, got[k], want, lre, minDigits)
		}
	}
}
