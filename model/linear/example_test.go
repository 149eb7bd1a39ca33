package linear_test

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/linear"
)

// inventCohort invents n participants of a fictional study with 6-region
// functional connectomes and one score (a "reading fluency" index) that
// rises with the connectivity of regions 0 and 1 and falls with that of
// regions 2 and 3.
func inventCohort(rng *rand.Rand, n int) model.Dataset {
	ps := make([]*data.Participant, n)
	y := mat.NewDense(n, 1, nil)
	for i := range ps {
		fc := mat.NewDense(6, 6, nil)
		for a := 0; a < 6; a++ {
			for b := a + 1; b < 6; b++ {
				v := math.Atanh(0.6 * (2*rng.Float64() - 1)) // a Fisher z value
				fc.Set(a, b, v)
				fc.Set(b, a, v)
			}
		}
		y.Set(i, 0, 2*fc.At(0, 1)-2*fc.At(2, 3)+0.1*rng.NormFloat64())
		ps[i] = &data.Participant{ID: fmt.Sprintf("sub-%02d", i+1), Functional: fc}
	}
	return model.Dataset{Participants: ps, Y: y}
}

// Fit ridge regression on the edges of the functional connectomes, the
// penalty chosen by 5-fold inner cross-validation, and predict new
// participants.
func Example() {
	rng := rand.New(rand.NewPCG(1, 2))
	train, test := inventCohort(rng, 80), inventCohort(rng, 3)

	cfg := linear.Config{Ridge: &linear.RidgeConfig{}} // [model.ridge] with every default
	cfg.SetDefaults()
	if err := cfg.Validate(); err != nil {
		fmt.Println(err)
		return
	}
	reg, err := cfg.New(1, 42)
	if err != nil {
		fmt.Println(err)
		return
	}
	if err := reg.Fit(context.Background(), train, model.Dataset{}); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("chosen alpha %.3g (relative to trace(K)/n)\n", reg.(*linear.Ridge).Alphas()[0])
	pred, err := reg.Predict(test.Participants)
	if err != nil {
		fmt.Println(err)
		return
	}
	for i, p := range test.Participants {
		fmt.Printf("%s: predicted %.1f, observed %.1f\n", p.ID, pred.At(i, 0), test.Y.At(i, 0))
	}
	// Output:
	// chosen alpha 0.0316 (relative to trace(K)/n)
	// sub-01: predicted 0.1, observed 0.0
	// sub-02: predicted -1.2, observed -1.0
	// sub-03: predicted 0.6, observed 0.8
}

// Select the edges that correlate with a score and predict from the
// strength of the selected networks.
func ExampleCPM() {
	rng := rand.New(rand.NewPCG(3, 4))
	train := inventCohort(rng, 120)
	m := linear.NewCPM(linear.CPMConfig{Input: linear.InputFunctional, Correlation: linear.CorrelationPearson, PThreshold: new(0.01), Network: linear.NetworkBoth})
	if err := m.Fit(context.Background(), train, model.Dataset{}); err != nil {
		fmt.Println(err)
		return
	}
	pos, neg := m.Selected(0)
	for _, k := range pos {
		i, j := linear.EdgePair(6, k)
		fmt.Printf("positive network: regions %d and %d\n", i, j)
	}
	for _, k := range neg {
		i, j := linear.EdgePair(6, k)
		fmt.Printf("negative network: regions %d and %d\n", i, j)
	}
	// Output:
	// positive network: regions 0 and 1
	// negative network: regions 2 and 3
}

func ExampleEdges() {
	m := mat.NewDense(3, 3, []float64{
		0, 0.5, 0.2,
		0.5, 0, -0.1,
		0.2, -0.1, 0,
	})
	fmt.Println(linear.Edges(m))
	fmt.Println(linear.EdgePair(3, 2))
	// Output:
	// [0.5 0.2 -0.1]
	// 1 2
}

// inventDiagnosis invents n participants of a fictional study with 6-region
// functional connectomes and a diagnosis, "control" (class 0) or
// "patient" (class 1), that is more likely the stronger the connectivity
// of regions 0 and 1.
func inventDiagnosis(rng *rand.Rand, n int) model.LabelledSet {
	set := model.LabelledSet{Classes: 2}
	for i := 0; i < n; i++ {
		fc := mat.NewDense(6, 6, nil)
		for a := 0; a < 6; a++ {
			for b := a + 1; b < 6; b++ {
				v := math.Atanh(0.6 * (2*rng.Float64() - 1)) // a Fisher z value
				fc.Set(a, b, v)
				fc.Set(b, a, v)
			}
		}
		label := 0
		if 4*fc.At(0, 1)+2*rng.NormFloat64() > 0 {
			label = 1
		}
		set.Participants = append(set.Participants, &data.Participant{ID: fmt.Sprintf("sub-%02d", i+1), Functional: fc})
		set.Labels = append(set.Labels, label)
	}
	return set
}

// Fit L2-penalised logistic regression on the edges of the functional
// connectomes to a diagnosis, C chosen by 5-fold inner cross-validation
// stratified by class, and give new participants' probabilities of each
// class.
func ExampleLogistic() {
	rng := rand.New(rand.NewPCG(3, 4))
	train, test := inventDiagnosis(rng, 80), inventDiagnosis(rng, 3)

	cfg := linear.Config{Logistic: &linear.LogisticConfig{Cs: []float64{0.001, 0.01, 0.1, 1, 10}}}
	cfg.SetDefaults()
	clf, err := cfg.NewClassifier(2, 42)
	if err != nil {
		fmt.Println(err)
		return
	}
	if err := clf.Fit(context.Background(), train, model.LabelledSet{}); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("chosen C", clf.(*linear.Logistic).C())
	proba, err := clf.PredictProba(test.Participants)
	if err != nil {
		fmt.Println(err)
		return
	}
	for i, p := range test.Participants {
		fmt.Printf("%s: P(control) %.2f, P(patient) %.2f, diagnosis %d\n", p.ID, proba.At(i, 0), proba.At(i, 1), test.Labels[i])
	}
	// Output:
	// chosen C 0.1
	// sub-01: P(control) 0.17, P(patient) 0.83, diagnosis 1
	// sub-02: P(control) 0.35, P(patient) 0.65, diagnosis 1
	// sub-03: P(control) 0.61, P(patient) 0.39, diagnosis 0
}
