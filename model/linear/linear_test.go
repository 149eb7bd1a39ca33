package linear

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// randomCohort invents n participants with random symmetric p × p
// functional and structural matrices and T scores that depend on a few
// functional edges plus noise. Participant i's Group is i mod 5, so the
// inner folds of any subset of the participants are the same partition.
func randomCohort(seed uint64, n, p, targets int) model.Dataset {
	rng := rand.New(rand.NewPCG(seed, 1))
	ps := make([]*data.Participant, n)
	y := mat.NewDense(n, targets, nil)
	for i := range ps {
		f, s := mat.NewDense(p, p, nil), mat.NewDense(p, p, nil)
		for a := 0; a < p; a++ {
			for b := a + 1; b < p; b++ {
				v, w := 0.4*rng.NormFloat64(), math.Abs(rng.NormFloat64())
				f.Set(a, b, v)
				f.Set(b, a, v)
				s.Set(a, b, w)
				s.Set(b, a, w)
			}
		}
		for j := 0; j < targets; j++ {
			y.Set(i, j, 3*f.At(0, j+1)-2*f.At(1, 2)+s.At(0, 1)+0.3*rng.NormFloat64())
		}
		ps[i] = &data.Participant{ID: fmt.Sprintf("sub-%03d", i), Group: fmt.Sprint(i % 5), Functional: f, Structural: s}
	}
	return model.Dataset{Participants: ps, Y: y}
}

// subset returns the participants rows of d with their scores of column j.
func subset(d model.Dataset, rows []int, j int) model.Dataset {
	ps := make([]*data.Participant, len(rows))
	y := mat.NewDense(len(rows), 1, nil)
	for a, i := range rows {
		ps[a] = d.Participants[i]
		y.Set(a, 0, d.Y.At(i, j))
	}
	return model.Dataset{Participants: ps, Y: y}
}

func baselines() map[string]Config {
	grid := []float64{0.01, 0.1, 1, 10, 100}
	return map[string]Config{
		"mean":               {Mean: &MeanConfig{}},
		"ridge dual":         {Ridge: &RidgeConfig{Input: InputBoth, Alphas: grid}},
		"ridge center":       {Ridge: &RidgeConfig{Standardize: StandardizeCenter, Alphas: grid}},
		"kernel linear":      {KernelRidge: &KernelRidgeConfig{Kernel: KernelLinear, Alphas: grid}},
		"kernel correlation": {KernelRidge: &KernelRidgeConfig{Alphas: grid}},
		"cpm":                {CPM: &CPMConfig{PThreshold: new(0.05)}},
		"cpm spearman":       {CPM: &CPMConfig{PThreshold: new(0.05), Correlation: CorrelationSpearman}},
	}
}

func fitPredict(t *testing.T, cfg Config, train model.Dataset, test []*data.Participant) *mat.Dense {
	t.Helper()
	cfg.SetDefaults()
	_, cols := train.Y.Dims()
	reg, err := cfg.New(cols, 7)
	if err != nil {
		t.Fatal(err)
	}
	if _, ok := reg.(model.ColumnWise); !ok {
		t.Fatalf("%s is not a model.ColumnWise", cfg.Kind())
	}
	if err := reg.Fit(context.Background(), train, model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	pred, err := reg.Predict(test)
	if err != nil {
		t.Fatal(err)
	}
	return pred
}

// TestMissingAndStackedColumns checks that a column's missing scores are
// left out of its fit (fitting it with NaNs equals fitting it on the
// participants with the score only), and that fitting stacked columns
// equals fitting each alone, for the dual (45 + 45 edges, 40 participants)
// and primal (10 edges) paths.
func TestMissingAndStackedColumns(t *testing.T) {
	for _, p := range []int{10, 5} {
		all := randomCohort(11, 48, p, 2)
		test := all.Participants[40:]
		train := model.Dataset{Participants: all.Participants[:40], Y: mat.NewDense(40, 3, nil)}
		rng := rand.New(rand.NewPCG(5, 5))
		perm := rng.Perm(40)
		var present []int
		for i := 0; i < 40; i++ {
			train.Y.Set(i, 0, all.Y.At(i, 0))
			train.Y.Set(i, 1, all.Y.At(i, 1))
			train.Y.Set(i, 2, all.Y.At(perm[i], 0)) // a permuted copy of column 0
			if i%7 == 3 {
				train.Y.Set(i, 1, math.NaN())
			} else {
				present = append(present, i)
			}
		}
		for name, cfg := range baselines() {
			if p == 5 && cfg.Ridge != nil {
				cfg.Ridge.Input = InputFunctional // 10 edges for 40 participants: primal
			}
			t.Run(fmt.Sprintf("p%d/%s", p, name), func(t *testing.T) {
				stacked := fitPredict(t, cfg, train, test)
				for j := 0; j < 3; j++ {
					rows := seq(40)
					if j == 1 {
						rows = present
					}
					alone := fitPredict(t, cfg, subset(train, rows, j), test)
					assertClose(t, stacked.Slice(0, len(test), j, j+1), alone, 1e-9)
				}
			})
		}
	}
}

// TestRelativeAlpha: with z-scored edges and no constant edge, a relative
// alpha is the absolute alpha times the number of edges (common practice,
// no source: trace(X̃X̃ᵀ)/n = Σ population variances = d).
func TestRelativeAlpha(t *testing.T) {
	all := randomCohort(2, 30, 8, 1)
	d := float64(NumEdges(8))
	rel := fitPredict(t, Config{Ridge: &RidgeConfig{Alphas: []float64{0.2}}}, all, all.Participants)
	abs := fitPredict(t, Config{Ridge: &RidgeConfig{Alphas: []float64{0.2 * d}, AlphaScale: AlphaAbsolute}}, all, all.Participants)
	assertClose(t, rel, abs, 1e-10)
}

// TestRidgeWeights: predictions equal Intercept + x·Weights in both the
// dual and the primal path, before and after Weights is first called.
func TestRidgeWeights(t *testing.T) {
	for _, p := range []int{10, 4} {
		all := randomCohort(3, 30, p, 2)
		r := NewRidge(RidgeConfig{Input: InputFunctional, Standardize: StandardizeZScore, Alphas: DefaultAlphas(), AlphaScale: AlphaRelative, InnerFolds: new(3)}, 1)
		if err := r.Fit(context.Background(), all, model.Dataset{}); err != nil {
			t.Fatal(err)
		}
		before, err := r.Predict(all.Participants)
		if err != nil {
			t.Fatal(err)
		}
		x, _, _ := edgeMatrix(all.Participants, InputFunctional, p)
		var manual mat.Dense
		manual.Mul(x, r.Weights())
		addToColumns(&manual, r.Intercept())
		assertClose(t, &manual, before, 1e-10)
		after, err := r.Predict(all.Participants)
		if err != nil {
			t.Fatal(err)
		}
		assertClose(t, after, before, 1e-10)
	}
}

func TestMean(t *testing.T) {
	nan := math.NaN()
	ps := []*data.Participant{{ID: "a"}, {ID: "b"}, {ID: "c"}}
	train := model.Dataset{Participants: ps[:2], Y: mat.NewDense(2, 2, []float64{1, nan, 3, 5})}
	valid := model.Dataset{Participants: ps[2:], Y: mat.NewDense(1, 2, []float64{8, 7})}
	m := NewMean()
	if err := m.Fit(context.Background(), train, valid); err != nil {
		t.Fatal(err)
	}
	pred, err := m.Predict(ps[:1])
	if err != nil {
		t.Fatal(err)
	}
	assertClose(t, pred, mat.NewDense(1, 2, []float64{4, 6}), 0)
}

func TestErrors(t *testing.T) {
	ctx := context.Background()
	all := randomCohort(4, 20, 6, 1)
	noFunctional := &data.Participant{ID: "sub-x", Structural: all.Participants[0].Structural}
	bigger := &data.Participant{ID: "sub-y", Functional: mat.NewDense(7, 7, nil)}
	withNaN := &data.Participant{ID: "sub-z", Functional: mat.DenseCopyOf(all.Participants[0].Functional)}
	withNaN.Functional.Set(1, 3, math.NaN())
	withNaN.Functional.Set(3, 1, math.NaN())
	oneScore := mat.NewDense(20, 1, nil)
	oneScore.Apply(func(i, j int, v float64) float64 { return math.NaN() }, oneScore)
	oneScore.Set(4, 0, 1)
	for name, cfg := range baselines() {
		cfg.SetDefaults()
		t.Run(name, func(t *testing.T) {
			reg, err := cfg.New(1, 1)
			if err != nil {
				t.Fatal(err)
			}
			if _, err := reg.Predict(all.Participants); err == nil {
				t.Error("Predict before Fit: no error")
			}
			scores := oneScore
			if cfg.Mean != nil { // the mean of one score is fine; of none, not
				scores = mat.DenseCopyOf(oneScore)
				scores.Set(4, 0, math.NaN())
			}
			err = reg.Fit(ctx, model.Dataset{Participants: all.Participants, Y: scores}, model.Dataset{})
			if err == nil || !strings.Contains(err.Error(), "score column 1") {
				t.Errorf("fit with too few scores present: error %v, want one naming score column 1", err)
			}
			if err := reg.Fit(ctx, all, model.Dataset{}); err != nil {
				t.Fatal(err)
			}
			if cfg.Mean != nil {
				return
			}
			for _, tc := range []struct {
				p    *data.Participant
				want string
			}{
				{noFunctional, `participant "sub-x": no functional connectome`},
				{bigger, `participant "sub-y": functional connectome is 7×7, want 6×6`},
				{withNaN, `participant "sub-z": functional connectome has NaN at row 2, column 4`},
			} {
				_, err := reg.Predict([]*data.Participant{tc.p})
				if err == nil || !strings.Contains(err.Error(), tc.want) {
					t.Errorf("Predict: error %v, want one containing %q", err, tc.want)
				}
			}
			train := model.Dataset{Participants: append([]*data.Participant{noFunctional}, all.Participants[1:]...), Y: all.Y}
			if err := reg.Fit(ctx, train, model.Dataset{}); err == nil || !strings.Contains(err.Error(), "sub-x") {
				t.Errorf("Fit with a participant lacking the input: error %v, want one naming sub-x", err)
			}
		})
	}
}

func TestEdges(t *testing.T) {
	m := mat.NewDense(4, 4, []float64{
		0, 1, 2, 3,
		1, 0, 4, 5,
		2, 4, 0, 6,
		3, 5, 6, 0,
	})
	got := Edges(m)
	for k, v := range []float64{1, 2, 3, 4, 5, 6} {
		if got[k] != v {
			t.Fatalf("Edges = %v, want 1…6", got)
		}
	}
	// NumEdges(268) = 268·267/2 (common practice, no source).
	if NumEdges(268) != 35778 {
		t.Errorf("NumEdges(268) = %d", NumEdges(268))
	}
	const p = 9
	k := 0
	for i := 0; i < p; i++ {
		for j := i + 1; j < p; j++ {
			if a, b := EdgePair(p, k); a != i || b != j {
				t.Errorf("EdgePair(%d, %d) = (%d, %d), want (%d, %d)", p, k, a, b, i, j)
			}
			k++
		}
	}
}

func TestInnerFolds(t *testing.T) {
	ps := make([]*data.Participant, 23)
	for i := range ps {
		ps[i] = &data.Participant{ID: fmt.Sprint(i)}
		if i < 12 {
			ps[i].Group = fmt.Sprint("family", i/3) // four families of three
		}
	}
	foldOf, err := innerFolds(ps, 5, 9, "model.ridge.inner_folds")
	if err != nil {
		t.Fatal(err)
	}
	size := make([]int, 5)
	for i, f := range foldOf {
		size[f]++
		if i < 12 && foldOf[i] != foldOf[i/3*3] {
			t.Errorf("family %d split across folds: %v", i/3, foldOf[:12])
		}
	}
	for f, s := range size {
		if s < 4 || s > 5 {
			t.Errorf("fold %d has %d participants; sizes %v", f, s, size)
		}
	}
	again, _ := innerFolds(ps, 5, 9, "model.ridge.inner_folds")
	if fmt.Sprint(again) != fmt.Sprint(foldOf) {
		t.Error("same seed, different folds")
	}
	_, err = innerFolds(ps[:3], 5, 9, "model.ridge.inner_folds")
	if err == nil || !strings.HasPrefix(err.Error(), "model.ridge.inner_folds: 5 inner folds") {
		t.Errorf("too few participants: error %v", err)
	}
}
