package train

import (
	"context"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/linear"
)

// TestInnerLossByHand checks Result.InnerLoss against its definition,
// computed here from the raw scores: for each unit of the mean predictor
// and of ridge, a model fitted on the training part without the inner
// validation part, and its mean squared error on the inner validation
// part divided by the training fold's score variance (sample SD, the
// standardization of TargetPrep), which is the error in standardized
// units. The mean predictor's prediction is the mean of the fitting
// scores; ridge's predictions move with an affine change of the scores
// (its penalty choice compares errors that all scale alike), so a ridge
// fitted on raw scores gives the same error (common practice, no source).
// It also checks that Result.Choices holds ridge's penalties, those of a
// ridge fitted on the whole training fold (both parts, as the runner fits).
func TestInnerLossByHand(t *testing.T) {
	cohort := toyCohort(40, 6, 5, true)
	exp := toyDesign(ridgeAndMean()...)
	res, err := (&Runner{Design: exp, Cohort: cohort}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(res.InnerLoss) != len(res.Units) {
		t.Fatalf("inner loss for %d units, want all %d", len(res.InnerLoss), len(res.Units))
	}
	y, _, err := scoresAndConfounds(exp.CV, cohort)
	if err != nil {
		t.Fatal(err)
	}
	T := len(cohort.Targets)
	for _, u := range res.Units {
		cfg := exp.Models[u.Model]
		split := res.Splits[u.Split]
		fit, valid := InnerValidation(split.Train, Groups(cohort), exp.CV.innerCount(), exp.CV.innerFraction(),
			unitSeed(exp.Seed, "inner", split.Repeat, split.Fold))
		seed := modelSeed(exp.Seed, u.Repeat, u.Fold)
		pred := mat.NewDense(len(valid), T, nil)
		switch cfg.Kind() {
		case "mean":
			for j := 0; j < T; j++ {
				m := meanOf(y, fit, j)
				for i := range valid {
					pred.Set(i, j, m)
				}
			}
		case "ridge":
			r := linear.NewRidge(*cfg.Ridge, seed)
			if err := r.Fit(context.Background(), rawDataset(cohort, y, fit), model.Dataset{}); err != nil {
				t.Fatal(err)
			}
			if pred, err = r.Predict(pick(cohort, valid)); err != nil {
				t.Fatal(err)
			}
			whole := linear.NewRidge(*cfg.Ridge, seed)
			if err := whole.Fit(context.Background(), rawDataset(cohort, y, fit), rawDataset(cohort, y, valid)); err != nil {
				t.Fatal(err)
			}
			got := res.Choices[u]
			if len(got) != T {
				t.Fatalf("%s repeat %d fold %d: choices for %d targets, want %d", cfg.Name, u.Repeat+1, u.Fold+1, len(got), T)
			}
			for j := range got {
				if got[j][0].Value != whole.Alphas()[j] || got[j][0].Setting != "alphas" {
					t.Errorf("%s repeat %d fold %d target %d: choice %+v, want alphas %v", cfg.Name, u.Repeat+1, u.Fold+1, j, got[j], whole.Alphas()[j])
				}
			}
		}
		if _, ok := res.Choices[u]; ok != (cfg.Kind() == "ridge") {
			t.Errorf("%s repeat %d fold %d: has choices %v, want them only for ridge", cfg.Name, u.Repeat+1, u.Fold+1, ok)
		}
		for j := 0; j < T; j++ {
			sd := sampleSD(y, split.Train, j)
			var sum float64
			var n int
			for i, r := range valid {
				if v := y.At(r, j); !math.IsNaN(v) {
					sum += (pred.At(i, j) - v) * (pred.At(i, j) - v)
					n++
				}
			}
			want := sum / float64(n) / (sd * sd)
			if got := res.InnerLoss[u][j]; !(math.Abs(got-want) <= 1e-9*want) {
				t.Errorf("%s repeat %d fold %d target %d: inner loss %.15g, by hand %.15g", cfg.Name, u.Repeat+1, u.Fold+1, j, got, want)
			}
		}
	}
}

// TestInnerLossOnlyWhenNeeded: the inner validation error is recorded
// only when the design asks for it (the experiment does when it has to
// choose its reference among at least two baselines), for baselines, on
// folds with an inner validation part, and never in permuted or
// sample-size runs.
func TestInnerLossOnlyWhenNeeded(t *testing.T) {
	cohort := toyCohort(40, 6, 6, false)
	tests := []struct {
		name  string
		exp   func() *Design
		sub   bool // a permuted or sample-size run
		want  int  // units with an inner loss
		tuned int  // units with choices
	}{
		{"two baselines", func() *Design { return toyDesign(ridgeAndMean()...) }, false, 16, 8},
		{"not asked for", func() *Design {
			e := toyDesign(ridgeAndMean()...)
			e.InnerLoss = false
			return e
		}, false, 0, 8},
		{"no inner validation", func() *Design {
			e := toyDesign(ridgeAndMean()...)
			zero := 0.0
			e.CV.InnerValidation = &zero
			return e
		}, false, 0, 8},
		{"sub-run", func() *Design { return toyDesign(ridgeAndMean()...) }, true, 0, 0},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			res, err := (&Runner{Design: tt.exp(), Cohort: cohort, scoresOnly: tt.sub}).Run(context.Background())
			if err != nil {
				t.Fatal(err)
			}
			if len(res.InnerLoss) != tt.want || len(res.Choices) != tt.tuned {
				t.Fatalf("inner loss for %d units and choices for %d, want %d and %d", len(res.InnerLoss), len(res.Choices), tt.want, tt.tuned)
			}
		})
	}
}

// rawDataset returns the rows of the cohort with their raw scores.
func rawDataset(c *data.Cohort, y *mat.Dense, rows []int) model.Dataset {
	_, T := y.Dims()
	z := mat.NewDense(len(rows), T, nil)
	for a, i := range rows {
		z.SetRow(a, y.RawRowView(i))
	}
	return model.Dataset{Participants: pick(c, rows), Y: z}
}

func meanOf(y *mat.Dense, rows []int, t int) float64 {
	var sum float64
	var n int
	for _, i := range rows {
		if v := y.At(i, t); !math.IsNaN(v) {
			sum += v
			n++
		}
	}
	return sum / float64(n)
}

func sampleSD(y *mat.Dense, rows []int, t int) float64 {
	m := meanOf(y, rows, t)
	var ss float64
	var n int
	for _, i := range rows {
		if v := y.At(i, t); !math.IsNaN(v) {
			ss += (v - m) * (v - m)
			n++
		}
	}
	return math.Sqrt(ss / float64(n-1))
}

// sameDiagnostics fails unless a and b hold the same choices and inner
// losses, bit for bit (NaN equal to NaN).
func sameDiagnostics(t *testing.T, what string, a, b *Result) {
	t.Helper()
	if len(a.Choices) != len(b.Choices) || len(a.InnerLoss) != len(b.InnerLoss) {
		t.Fatalf("%s: %d units with choices and %d with inner loss, want %d and %d", what, len(a.Choices), len(a.InnerLoss), len(b.Choices), len(b.InnerLoss))
	}
	for u, cs := range b.Choices {
		if !slices.EqualFunc(a.Choices[u], cs, slices.Equal) {
			t.Errorf("%s: unit %+v: choices %v, want %v", what, u, a.Choices[u], cs)
		}
	}
	for u, l := range b.InnerLoss {
		if !slices.EqualFunc(a.InnerLoss[u], l, func(x, y float64) bool { return math.Float64bits(x) == math.Float64bits(y) }) {
			t.Errorf("%s: unit %+v: inner loss %v, want %v", what, u, a.InnerLoss[u], l)
		}
	}
}
