package graphnet_test

import (
	"context"
	"fmt"
	"slices"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/graphnet"
)

// A one-branch network trained on an invented cohort whose score is
// planted in the functional connectome, with early stopping on an inner
// validation set, then asked to predict held-out participants.
func Example() {
	c, err := synth.Generate(synth.Config{N: 160, P: 10, Seed: 3, Targets: 1, Ceiling: 0.9})
	if err != nil {
		panic(err)
	}
	ps := c.Participants
	scores := mat.NewDense(len(ps), 1, nil)
	for i, p := range ps {
		scores.Set(i, 0, p.Scores[0])
	}
	// Standardize with the training part only (the first 100).
	train := mat.Col(nil, 0, scores.Slice(0, 100, 0, 1))
	mean, sd := stat.MeanStdDev(train, nil)
	for i := range ps {
		scores.Set(i, 0, (scores.At(i, 0)-mean)/sd)
	}
	part := func(from, to int) model.Dataset {
		return model.Dataset{Participants: ps[from:to], Y: mat.DenseCopyOf(scores.Slice(from, to, 0, 1))}
	}

	// Settings left out (nil or "") take their defaults; new(100) sets a
	// number whose default is not 0.
	cfg := graphnet.Config{
		Branches: []graphnet.BranchConfig{{
			Input:  graphnet.InputFunctional,
			Layers: []graphnet.LayerConfig{{Kind: graphnet.LayerE2N, Channels: 8}, {Kind: graphnet.LayerN2G, Size: 16}},
		}},
		Head:      []int{8},
		Epochs:    new(100),
		BatchSize: new(16),
	}
	cfg.SetDefaults()
	net, err := graphnet.New(cfg, c.P(), 1, 7)
	if err != nil {
		panic(err)
	}
	if err := net.Fit(context.Background(), part(0, 100), part(100, 130)); err != nil {
		panic(err)
	}
	test := part(130, 160)
	pred, err := net.Predict(test.Participants)
	if err != nil {
		panic(err)
	}
	r := stat.Correlation(mat.Col(nil, 0, pred), mat.Col(nil, 0, test.Y), nil)
	fmt.Println("predictions:", pred.RawMatrix().Rows, "×", pred.RawMatrix().Cols)
	fmt.Println("held-out r above 0.4:", r > 0.4)
	// Output:
	// predictions: 30 × 1
	// held-out r above 0.4: true
}

// Validate names the layer that cannot take its input.
func ExampleConfig_Validate() {
	cfg := graphnet.Config{
		Branches: []graphnet.BranchConfig{{
			Layers: []graphnet.LayerConfig{{Kind: "e2e", Channels: 16}, {Kind: "n2g", Size: 32}, {Kind: "e2n", Channels: 8}},
		}},
	}
	cfg.SetDefaults()
	fmt.Println(cfg.Validate())
	// Output:
	// model.network.branch[0].layers[2] (e2n): needs an edge input (channels × p × p: the branch input, an e2e or an edge layer), found the output of a graph layer
}

// A classifier of two classes (above or below the median score of an
// invented cohort whose score is planted in the functional connectome),
// one network stopped early on an inner validation set, with balanced
// class weights; it gives class probabilities for held-out participants.
func ExampleClassifier() {
	c, err := synth.Generate(synth.Config{N: 160, P: 10, Seed: 3, Targets: 1, Ceiling: 0.9})
	if err != nil {
		panic(err)
	}
	ps := c.Participants
	scores := make([]float64, len(ps))
	for i, p := range ps {
		scores[i] = p.Scores[0]
	}
	median := stat.Quantile(0.5, stat.Empirical, slices.Sorted(slices.Values(scores[:100])), nil)
	part := func(from, to int) model.LabelledSet {
		s := model.LabelledSet{Participants: ps[from:to], Classes: 2}
		for _, v := range scores[from:to] {
			class := 0
			if v > median {
				class = 1
			}
			s.Labels = append(s.Labels, class)
		}
		return s
	}
	cfg := graphnet.Config{
		Branches: []graphnet.BranchConfig{{
			Layers: []graphnet.LayerConfig{{Kind: graphnet.LayerE2N, Channels: 8}, {Kind: graphnet.LayerN2G, Size: 16}},
		}},
		Epochs:      new(100),
		Ensemble:    new(1),
		ClassWeight: graphnet.ClassWeightBalanced,
	}
	clf, err := graphnet.NewClassifier(cfg, c.P(), 2, 7)
	if err != nil {
		panic(err)
	}
	if err := clf.Fit(context.Background(), part(0, 100), part(100, 130)); err != nil {
		panic(err)
	}
	test := part(130, 160)
	proba, err := clf.PredictProba(test.Participants)
	if err != nil {
		panic(err)
	}
	right := 0
	for i, y := range test.Labels {
		if (proba.At(i, 1) >= 0.5) == (y == 1) {
			right++
		}
	}
	fmt.Println("probabilities:", proba.RawMatrix().Rows, "×", proba.RawMatrix().Cols)
	fmt.Println("held-out accuracy above 0.7:", float64(right)/float64(len(test.Labels)) > 0.7)
	// Output:
	// probabilities: 30 × 2
	// held-out accuracy above 0.7: true
}
