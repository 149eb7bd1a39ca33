package train

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/graphnet"
	"github.com/skein-neuro/skein/model/linear"
)

// toyCohort makes n participants with p × p functional matrices whose
// edge (0, 1) carries the first score, and two targets (the second with
// missing values), families of two when grouped.
func toyCohort(n, p int, seed uint64, grouped bool) *data.Cohort {
	rng := rand.New(rand.NewPCG(seed, 1))
	c := &data.Cohort{Targets: []string{"alpha", "beta"}, Covariates: []string{"age"}}
	for r := 0; r < p; r++ {
		c.Regions = append(c.Regions, fmt.Sprintf("R%d", r))
	}
	for i := 0; i < n; i++ {
		fc := mat.NewDense(p, p, nil)
		for a := 0; a < p; a++ {
			for b := a + 1; b < p; b++ {
				v := rng.NormFloat64() * 0.3
				fc.Set(a, b, v)
				fc.Set(b, a, v)
			}
		}
		beta := rng.NormFloat64()
		if i%7 == 3 {
			beta = math.NaN()
		}
		pt := &data.Participant{
			ID:         fmt.Sprintf("sub-%03d", i),
			Functional: fc,
			Scores:     []float64{10*fc.At(0, 1) + rng.NormFloat64()*0.5 + 3, beta},
			Covariates: []float64{20 + 40*rng.Float64()},
		}
		if grouped {
			pt.Group = fmt.Sprintf("fam%d", i/2)
		}
		c.Participants = append(c.Participants, pt)
	}
	return c
}

// toyDesign is a 4-fold × 2 design of models that records baselines'
// inner-validation errors and log losses.
func toyDesign(models ...ModelConfig) *Design {
	exp := &Design{Seed: 11, CV: CV{Folds: new(4), Repeats: new(2)}, Models: models, InnerLoss: true, LabelLoss: true}
	exp.SetDefaults()
	return exp
}

func ridgeAndMean() []ModelConfig {
	return []ModelConfig{
		{Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}},
		{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}},
	}
}

func TestRunDeterministicAcrossJobs(t *testing.T) {
	cohort := toyCohort(40, 6, 1, true)
	exp := toyDesign(ridgeAndMean()[:1]...)
	var results [2]*Result
	for j, jobs := range []int{1, 2} {
		res, err := (&Runner{Design: exp, Cohort: cohort, Jobs: jobs}).Run(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		results[j] = res
	}
	if !reflect.DeepEqual(results[0].Predictions, results[1].Predictions) {
		t.Fatal("--jobs 1 and --jobs 2 gave different predictions")
	}
	// One prediction per participant, repeat and present target.
	want := 0
	for _, p := range cohort.Participants {
		for _, s := range p.Scores {
			if !math.IsNaN(s) {
				want += *exp.CV.Repeats
			}
		}
	}
	if got := len(results[0].Predictions); got != want {
		t.Fatalf("%d predictions, want %d", got, want)
	}
}

// TestModelNameDoesNotChangePredictions runs the same network and the
// same ridge under two names each: a model's seed comes from the
// experiment seed, the repeat and the fold (modelSeed), never its name,
// so the twins predict alike to the bit (a property of the design, no
// source).
func TestModelNameDoesNotChangePredictions(t *testing.T) {
	net := func(name string) ModelConfig {
		return ModelConfig{Name: name, Network: &graphnet.Config{
			Branches: []graphnet.BranchConfig{{Input: "functional", Layers: []graphnet.LayerConfig{
				{Kind: "e2n", Channels: 2}, {Kind: "dropout", Rate: 0.3}, {Kind: "n2g", Size: 4},
			}}},
			Epochs: new(3), Optimizer: graphnet.OptimizerConfig{Rate: new(1e-2)},
		}}
	}
	ridge := func(name string) ModelConfig {
		return ModelConfig{Name: name, Config: linear.Config{Ridge: &linear.RidgeConfig{}}}
	}
	exp := toyDesign(net("net-a"), net("net-b"), ridge("ridge-a"), ridge("ridge-b"))
	exp.CV.InnerValidation = new(0.2)
	res, err := (&Runner{Design: exp, Cohort: toyCohort(24, 5, 3, false), Jobs: 2}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	byModel := make(map[string][]model.Prediction)
	for _, p := range res.Predictions {
		p.Model = p.Model[:len(p.Model)-2] // "net-a" → "net"
		byModel[p.Model] = append(byModel[p.Model], p)
	}
	for _, kind := range []string{"net", "ridge"} {
		got := byModel[kind]
		half := len(got) / 2
		if half == 0 || !reflect.DeepEqual(got[:half], got[half:]) {
			t.Errorf("%s: the two names gave different predictions (%d in all)", kind, len(got))
		}
	}
}

// TestRunChecksEverySplitFirst gives a score one value everywhere but in
// one test fold, the last split's, so that its training scores are all
// the same and cannot be standardized: the run stops before any unit starts, naming that fold, although folds
// are prepared only when their first unit starts (lazyFold) and the
// units of the earlier splits could train.
func TestRunChecksEverySplitFirst(t *testing.T) {
	cohort := toyCohort(24, 5, 3, false)
	var started int
	r := &Runner{Design: toyDesign(ridgeAndMean()[:1]...), Cohort: cohort, Jobs: 1,
		OnEvent: func(e Event) {
			if e.Kind == UnitStarted {
				started++
			}
		}}
	splits, err := r.planSplits()
	if err != nil {
		t.Fatal(err)
	}
	last := splits[len(splits)-1]
	for _, p := range cohort.Participants {
		p.Scores[1] = 1
	}
	for k, i := range last.Test {
		cohort.Participants[i].Scores[1] = float64(2 + k)
	}
	_, err = r.Run(context.Background())
	want := fmt.Sprintf("repeat %d, fold %d: ", last.Repeat+1, last.Fold+1)
	if err == nil || !strings.Contains(err.Error(), "every training score is the same") || !strings.Contains(err.Error(), want) {
		t.Fatalf("error %v, want one about the training scores of %q", err, want)
	}
	if started != 0 {
		t.Errorf("%d units started before the error", started)
	}
}
