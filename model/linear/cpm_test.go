package linear

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// TestCPMAgainstSciPy compares the selected networks and the predictions
// with connectome-based predictive modelling done by scipy.stats.pearsonr /
// spearmanr p-values and numpy's lstsq (testdata/linear/cpm.json, written
// by make_fixtures.py).
func TestCPMAgainstSciPy(t *testing.T) {
	var fixture struct {
		fixtureCohort
		Cases []struct {
			Correlation Correlation `json:"correlation"`
			Network     CPMNetwork  `json:"network"`
			PThreshold  float64     `json:"p_threshold"`
			Positive    []int       `json:"positive"`
			Negative    []int       `json:"negative"`
			Predictions []float64   `json:"predictions"`
		} `json:"cases"`
		CriticalR []struct {
			N int     `json:"n"`
			P float64 `json:"p"`
			R float64 `json:"r"`
		} `json:"critical_r"`
		PValues []struct {
			N int     `json:"n"`
			R float64 `json:"r"`
			P float64 `json:"p"`
		} `json:"p_values"`
	}
	readJSON(t, "cpm.json", &fixture)
	c := fixture.fixtureCohort
	train, test := c.dataset(c.Train), c.dataset(c.Test)
	for _, tc := range fixture.Cases {
		t.Run(string(tc.Correlation)+"/"+string(tc.Network), func(t *testing.T) {
			m := NewCPM(CPMConfig{Input: InputFunctional, Correlation: tc.Correlation, PThreshold: new(tc.PThreshold), Network: tc.Network})
			if err := m.Fit(context.Background(), train, model.Dataset{}); err != nil {
				t.Fatal(err)
			}
			pos, neg := m.Selected(0)
			if !slices.Equal(pos, tc.Positive) && !(len(pos) == 0 && len(tc.Positive) == 0) {
				t.Errorf("positive network %v, scipy selects %v", pos, tc.Positive)
			}
			if !slices.Equal(neg, tc.Negative) && !(len(neg) == 0 && len(tc.Negative) == 0) {
				t.Errorf("negative network %v, scipy selects %v", neg, tc.Negative)
			}
			pred, err := m.Predict(test.Participants)
			if err != nil {
				t.Fatal(err)
			}
			assertClose(t, pred, mat.NewDense(len(c.Test), 1, tc.Predictions), 1e-9)
		})
	}
	// Critical |r| from scipy.stats.t.ppf; also, from memory, the tables of
	// critical values of Pearson's r give 0.708 (df 10, two-sided 0.01) and
	// 0.576 (df 10, 0.05), which the n = 12 entries match.
	for _, cr := range fixture.CriticalR {
		// gonum's t quantile is accurate to about 1e-9.
		if got := CriticalR(cr.N, cr.P); math.Abs(got-cr.R) > 1e-8 {
			t.Errorf("CriticalR(%d, %v) = %.12g, scipy gives %.12g", cr.N, cr.P, got, cr.R)
		}
		if p := PValue(CriticalR(cr.N, cr.P), cr.N); math.Abs(p-cr.P) > 1e-8*cr.P {
			t.Errorf("PValue(CriticalR(%d, %v)) = %.12g", cr.N, cr.P, p)
		}
	}
	for _, pv := range fixture.PValues {
		if got := PValue(pv.R, pv.N); math.Abs(got-pv.P) > 1e-10*pv.P {
			t.Errorf("PValue(%v, %d) = %.12g, scipy gives %.12g", pv.R, pv.N, got, pv.P)
		}
	}
}

// plantedCohort invents n participants with p × p functional matrices of
// independent N(0, 1) edges and one score, the sum of the planted positive
// edges minus the sum of the planted negative edges plus N(0, noise²).
func plantedCohort(rng *rand.Rand, n, p int, pos, neg []int, noise float64) model.Dataset {
	ps := make([]*data.Participant, n)
	y := mat.NewDense(n, 1, nil)
	for i := range ps {
		m := mat.NewDense(p, p, nil)
		edges := make([]float64, NumEdges(p))
		for k := range edges {
			edges[k] = rng.NormFloat64()
			a, b := EdgePair(p, k)
			m.Set(a, b, edges[k])
			m.Set(b, a, edges[k])
		}
		score := noise * rng.NormFloat64()
		for _, k := range pos {
			score += edges[k]
		}
		for _, k := range neg {
			score -= edges[k]
		}
		y.Set(i, 0, score)
		ps[i] = &data.Participant{ID: fmt.Sprintf("sub-%03d", i), Functional: m}
	}
	return model.Dataset{Participants: ps, Y: y}
}

// TestCPMRecoversPlantedNetworks: with 5 planted positive and 5 planted
// negative edges among 190 (p = 20) and n = 200, each planted edge has
// r ≈ 1/√11 ≈ 0.30 with the score (t ≈ 4.4, p ≈ 1e-5), so all must be
// selected at p < 0.01, while about 1.8 of the 180 null edges pass by
// chance.
func TestCPMRecoversPlantedNetworks(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	plantedPos := []int{3, 40, 77, 120, 181}
	plantedNeg := []int{10, 55, 99, 150, 170}
	train := plantedCohort(rng, 200, 20, plantedPos, plantedNeg, 1)
	test := plantedCohort(rng, 100, 20, plantedPos, plantedNeg, 1)
	m := NewCPM(CPMConfig{Input: InputFunctional, Correlation: CorrelationPearson, PThreshold: new(0.01), Network: NetworkBoth})
	if err := m.Fit(context.Background(), train, model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	pos, neg := m.Selected(0)
	for name, sets := range map[string][2][]int{"positive": {pos, plantedPos}, "negative": {neg, plantedNeg}} {
		got, planted := sets[0], sets[1]
		for _, k := range planted {
			if !slices.Contains(got, k) {
				t.Errorf("%s network %v misses planted edge %d", name, got, k)
			}
		}
		if extra := len(got) - len(planted); extra > 5 {
			t.Errorf("%s network %v has %d edges beyond the planted ones, expected about 1", name, got, extra)
		}
	}
	_, bPos, bNeg := m.Coefficients(0)
	if bPos <= 0 || bNeg >= 0 {
		t.Errorf("strength weights %v, %v: want positive and negative", bPos, bNeg)
	}
	pred, err := m.Predict(test.Participants)
	if err != nil {
		t.Fatal(err)
	}
	if r := stat.Correlation(mat.Col(nil, 0, pred), mat.Col(nil, 0, test.Y), nil); r < 0.8 {
		t.Errorf("test correlation of predictions %.3f, want at least 0.8 (the planted signal explains 10/11 of the variance)", r)
	}
}
