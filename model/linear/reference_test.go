package linear

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// fixtureCohort is one invented cohort of testdata/linear/sklearn.json,
// written by testdata/linear/make_fixtures.py with scikit-learn's
// predictions for its test participants.
type fixtureCohort struct {
	P          int           `json:"p"`
	Functional [][][]float64 `json:"functional"`
	Structural [][][]float64 `json:"structural"`
	Y          [][]float64   `json:"y"`
	Train      []int         `json:"train"`
	Test       []int         `json:"test"`
	Cases      []struct {
		Name         string          `json:"name"`
		Model        string          `json:"model"`
		Settings     json.RawMessage `json:"settings"`
		Predictions  [][]float64     `json:"predictions"`
		ChosenAlphas []float64       `json:"chosen_alphas"`
	} `json:"cases"`
}

func readJSON(t *testing.T, name string, v any) {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("..", "..", "testdata", "linear", name))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(raw, v); err != nil {
		t.Fatalf("%s: %v", name, err)
	}
}

func denseOf(rows [][]float64) *mat.Dense {
	m := mat.NewDense(len(rows), len(rows[0]), nil)
	for i, r := range rows {
		m.SetRow(i, r)
	}
	return m
}

// dataset returns the participants rows of c with their scores; each
// participant's Group is its position modulo 5, which makes the inner folds
// those the fixture script gave GridSearchCV.
func (c fixtureCohort) dataset(rows []int) model.Dataset {
	ps := make([]*data.Participant, len(rows))
	y := make([][]float64, len(rows))
	for a, i := range rows {
		ps[a] = &data.Participant{
			ID:         fmt.Sprintf("sub-%02d", i),
			Group:      fmt.Sprint(a % 5),
			Functional: denseOf(c.Functional[i]),
			Structural: denseOf(c.Structural[i]),
		}
		y[a] = c.Y[i]
	}
	return model.Dataset{Participants: ps, Y: denseOf(y)}
}

// TestAgainstScikitLearn fits every case of the fixtures of
// testdata/linear/make_fixtures.py (sklearn.json), make_grid_edges.py
// (grid_edges.json) and make_loo.py (loo.json: RidgeCV's efficient
// leave-one-out against inner = "loo") and compares the predictions, and
// the penalties chosen by inner cross-validation, with scikit-learn's.
func TestAgainstScikitLearn(t *testing.T) {
	for _, file := range []string{"sklearn.json", "grid_edges.json", "loo.json"} {
		var fixture struct {
			Cohorts []fixtureCohort `json:"cohorts"`
		}
		readJSON(t, file, &fixture)
		for ci, c := range fixture.Cohorts {
			testFixtureCohort(t, fmt.Sprintf("%s/cohort%d", file, ci), c)
		}
	}
}

func testFixtureCohort(t *testing.T, name string, c fixtureCohort) {
	train, test := c.dataset(c.Train), c.dataset(c.Test)
	for _, tc := range c.Cases {
		t.Run(name+"/"+tc.Name, func(t *testing.T) {
			var set struct {
				Input       Input           `json:"input"`
				Standardize Standardization `json:"standardize"`
				Kernel      Kernel          `json:"kernel"`
				Alphas      []float64       `json:"alphas"`
				AlphaScale  AlphaScale      `json:"alpha_scale"`
				InnerFolds  *int            `json:"inner_folds"`
				Inner       InnerCV         `json:"inner"`
			}
			if err := json.Unmarshal(tc.Settings, &set); err != nil {
				t.Fatal(err)
			}
			var cfg Config
			switch tc.Model {
			case "ridge":
				cfg.Ridge = &RidgeConfig{Input: set.Input, Standardize: set.Standardize,
					Alphas: set.Alphas, AlphaScale: set.AlphaScale, InnerFolds: set.InnerFolds, Inner: set.Inner}
			case "kernel_ridge":
				cfg.KernelRidge = &KernelRidgeConfig{Input: set.Input, Kernel: set.Kernel,
					Alphas: set.Alphas, AlphaScale: set.AlphaScale, InnerFolds: set.InnerFolds}
			}
			cfg.SetDefaults()
			if err := cfg.Validate(); err != nil {
				t.Fatal(err)
			}
			reg, err := cfg.New(2, 1)
			if err != nil {
				t.Fatal(err)
			}
			if err := reg.Fit(context.Background(), train, model.Dataset{}); err != nil {
				t.Fatal(err)
			}
			if tc.ChosenAlphas != nil {
				// GridSearchCV's best_params_ is the value chosen; it is at
				// the grid's edge when it is the grid's min or max.
				lo, hi := slices.Min(set.Alphas), slices.Max(set.Alphas)
				got := reg.(model.Tuned).Choices()
				if len(got) != len(tc.ChosenAlphas) {
					t.Fatalf("choices for %d columns, want %d", len(got), len(tc.ChosenAlphas))
				}
				for j, want := range tc.ChosenAlphas {
					wantChoice := []model.Choice{{Setting: "alphas", Value: want, Min: lo, Max: hi}}
					if !slices.Equal(got[j], wantChoice) {
						t.Errorf("column %d: choices %+v, want %+v (GridSearchCV's)", j, got[j], wantChoice)
					}
					if edge := want == lo || want == hi; got[j][0].AtEdge() != edge {
						t.Errorf("column %d: AtEdge() = %v for alpha %v of grid %v", j, !edge, want, set.Alphas)
					}
				}
			}
			pred, err := reg.Predict(test.Participants)
			if err != nil {
				t.Fatal(err)
			}
			want := denseOf(tc.Predictions)
			assertClose(t, pred, want, 1e-8)
			var diff mat.Dense
			diff.Sub(pred, want)
			t.Logf("largest difference from scikit-learn %.2g", mat.Norm(&diff, math.Inf(1)))
		})
	}
}

// assertClose fails unless every element of got is within tol of want,
// relative to max(1, |want|).
func assertClose(t *testing.T, got, want mat.Matrix, tol float64) {
	t.Helper()
	r, c := want.Dims()
	if gr, gc := got.Dims(); gr != r || gc != c {
		t.Fatalf("got %d×%d, want %d×%d", gr, gc, r, c)
	}
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			g, w := got.At(i, j), want.At(i, j)
			if !(math.Abs(g-w) <= tol*math.Max(1, math.Abs(w))) {
				t.Errorf("[%d, %d] = %.12g, want %.12g", i, j, g, w)
			}
		}
	}
}
