package linear

import (
	"context"
	"math"
	"slices"
	"sort"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/model"
)

// synthHalves returns a synthetic cohort with planted functional edges,
// split into a training and a test half, and its scores standardized.
func synthHalves(t *testing.T) (train, test model.Dataset, truth []synth.Planted, p int) {
	t.Helper()
	c, err := synth.Generate(synth.Config{N: 240, P: 16, Seed: 5, Ceiling: 0.9})
	if err != nil {
		t.Fatal(err)
	}
	ps := c.Participants
	for _, q := range ps {
		q.Functional = fisherZ(q.Functional)
	}
	y := mat.NewDense(len(ps), len(c.Targets), nil)
	for i, q := range ps {
		y.SetRow(i, q.Scores)
	}
	half := len(ps) / 2
	train = model.Dataset{Participants: ps[:half], Y: mat.DenseCopyOf(y.Slice(0, half, 0, len(c.Targets)))}
	test = model.Dataset{Participants: ps[half:], Y: mat.DenseCopyOf(y.Slice(half, len(ps), 0, len(c.Targets)))}
	return train, test, c.Truth, c.P()
}

// fisherZ returns atanh of the off-diagonal entries, 0 on the diagonal.
func fisherZ(f *mat.Dense) *mat.Dense {
	p, _ := f.Dims()
	z := mat.NewDense(p, p, nil)
	for i := range p {
		for j := range p {
			if i != j {
				z.Set(i, j, math.Atanh(math.Max(-0.999999, math.Min(0.999999, f.At(i, j)))))
			}
		}
	}
	return z
}

// plantedAUC returns the probability that a planted edge of pt has a
// larger |importance| in m than an edge that is not planted (the area
// under the ROC curve of |importance| as a detector of planted edges, ties
// counting one half).
func plantedAUC(m *mat.Dense, pt synth.Planted, p int) float64 {
	planted := make(map[[2]int]bool)
	for _, e := range append(append([]synth.Edge(nil), pt.Positive...), pt.Negative...) {
		i, j := min(e.I, e.J), max(e.I, e.J)
		planted[[2]int{i, j}] = true
	}
	var in, out []float64
	for i := range p {
		for j := i + 1; j < p; j++ {
			if planted[[2]int{i, j}] {
				in = append(in, math.Abs(m.At(i, j)))
			} else {
				out = append(out, math.Abs(m.At(i, j)))
			}
		}
	}
	sort.Float64s(out)
	var wins float64
	for _, v := range in {
		below := sort.SearchFloat64s(out, v)
		ties := sort.SearchFloat64s(out, math.Nextafter(v, math.Inf(1))) - below
		wins += float64(below) + float64(ties)/2
	}
	return wins / float64(len(in)*len(out))
}

func TestEdgeImportancePlantedEdgesRankFirst(t *testing.T) {
	train, test, truth, p := synthHalves(t)
	ridge := NewRidge(RidgeConfig{Input: InputFunctional, Standardize: "zscore", Alphas: DefaultAlphas(), AlphaScale: "relative", InnerFolds: new(5)}, 1)
	kernel := NewKernelRidge(KernelRidgeConfig{Input: InputFunctional, Kernel: KernelCorrelation, Alphas: DefaultAlphas(), AlphaScale: "relative", InnerFolds: new(5)}, 1)
	cpm := NewCPM(CPMConfig{Input: InputFunctional, Correlation: "pearson", PThreshold: new(0.01), Network: "both"})
	for _, tc := range []struct {
		name   string
		model  model.Interpreter
		minAUC float64
	}{
		// The planted edges carry the whole signal (synth's documentation),
		// so an activation pattern should single them out; 0.9 is our own
		// bar (no source).
		{"ridge", ridge, 0.9},
		{"kernel ridge", kernel, 0.9},
		{"cpm", cpm, 0.8},
	} {
		if err := tc.model.Fit(context.Background(), train, model.Dataset{}); err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		maps, err := tc.model.EdgeImportance(test.Participants)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		if len(maps) != len(truth) {
			t.Fatalf("%s: %d maps for %d targets", tc.name, len(maps), len(truth))
		}
		for j, m := range maps {
			if !mat.Equal(m, m.T()) {
				t.Errorf("%s, target %d: map is not symmetric", tc.name, j)
			}
			if auc := plantedAUC(m, truth[j], p); auc < tc.minAUC {
				t.Errorf("%s, target %s: planted edges rank above the others with probability %.3f, want ≥ %.2f", tc.name, truth[j].Target, auc, tc.minAUC)
			} else {
				t.Logf("%s, target %s: AUC %.3f", tc.name, truth[j].Target, auc)
			}
		}
	}
}

// TestActivationPatternIsCovariance checks the pattern against gonum's
// stat.Covariance (sample covariance, n − 1) of each edge with the
// predictions.
func TestActivationPatternIsCovariance(t *testing.T) {
	train, test, _, _ := synthHalves(t)
	r := NewRidge(RidgeConfig{Input: InputFunctional, Standardize: "zscore", Alphas: []float64{1}, AlphaScale: "relative", InnerFolds: new(5)}, 1)
	if err := r.Fit(context.Background(), train, model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	maps, err := r.EdgeImportance(test.Participants)
	if err != nil {
		t.Fatal(err)
	}
	pred, err := r.Predict(test.Participants)
	if err != nil {
		t.Fatal(err)
	}
	yhat := mat.Col(nil, 1, pred)
	for _, e := range [][2]int{{0, 1}, {3, 9}, {14, 15}} {
		x := make([]float64, len(test.Participants))
		for i, q := range test.Participants {
			x[i] = q.Functional.At(e[0], e[1])
		}
		want := stat.Covariance(x, yhat, nil)
		if got := maps[1].At(e[0], e[1]); math.Abs(got-want) > 1e-10*math.Max(1, math.Abs(want)) {
			t.Errorf("edge %v: pattern %v, stat.Covariance %v", e, got, want)
		}
	}
	if maps[1].At(2, 2) != 0 {
		t.Error("diagonal of the pattern is not zero")
	}
	if _, err := r.EdgeImportance([]*data.Participant{test.Participants[0]}); err == nil {
		t.Error("one participant: no error")
	}
}

// TestImportanceViewsOfBoth: for input "both", ridge and kernel ridge give
// each target a functional and a structural pattern, each the sample
// covariance (gonum's stat.Covariance) of that matrix's edge with the
// predictions, and CPM places each selected edge in its matrix's map.
func TestImportanceViewsOfBoth(t *testing.T) {
	train, test, _, p := synthHalves(t)
	T := train.Y.RawMatrix().Cols
	for _, tc := range []struct {
		name string
		reg  model.Interpreter
	}{
		{"ridge", NewRidge(RidgeConfig{Input: InputBoth, Standardize: "zscore", Alphas: []float64{1}, AlphaScale: "relative", InnerFolds: new(5)}, 1)},
		{"kernel ridge", NewKernelRidge(KernelRidgeConfig{Input: InputBoth, Kernel: KernelCorrelation, Alphas: []float64{1}, AlphaScale: "relative", InnerFolds: new(5)}, 1)},
	} {
		if err := tc.reg.Fit(context.Background(), train, model.Dataset{}); err != nil {
			t.Fatal(err)
		}
		maps, err := tc.reg.EdgeImportance(test.Participants)
		if err != nil {
			t.Fatal(err)
		}
		if len(maps) != 2*T {
			t.Fatalf("%s: %d maps, want 2 views × %d targets", tc.name, len(maps), T)
		}
		pred, err := tc.reg.Predict(test.Participants)
		if err != nil {
			t.Fatal(err)
		}
		for v, matrix := range []func(*data.Participant) *mat.Dense{
			func(q *data.Participant) *mat.Dense { return q.Functional },
			func(q *data.Participant) *mat.Dense { return q.Structural },
		} {
			for j := range T {
				yhat := mat.Col(nil, j, pred)
				for _, e := range [][2]int{{0, 1}, {3, 9}, {p - 2, p - 1}} {
					x := make([]float64, len(test.Participants))
					for i, q := range test.Participants {
						x[i] = matrix(q).At(e[0], e[1])
					}
					want := stat.Covariance(x, yhat, nil)
					if got := maps[v*T+j].At(e[0], e[1]); math.Abs(got-want) > 1e-10*math.Max(1, math.Abs(want)) {
						t.Errorf("%s, view %d, target %d, edge %v: pattern %v, stat.Covariance %v", tc.name, v, j, e, got, want)
					}
				}
			}
		}
	}
	cpm := NewCPM(CPMConfig{Input: InputBoth, Correlation: "pearson", PThreshold: new(0.2), Network: "both"})
	if err := cpm.Fit(context.Background(), train, model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	maps, err := cpm.EdgeImportance(nil)
	if err != nil {
		t.Fatal(err)
	}
	e := NumEdges(p)
	structural := 0
	for j := range T {
		pos, neg := cpm.Selected(j)
		for sign, edges := range map[float64][]int{1: pos, -1: neg} {
			for _, k := range edges {
				a, b := EdgePair(p, k%e)
				if got := maps[k/e*T+j].At(a, b); got != sign {
					t.Errorf("cpm, target %d, edge %d: %v in view %d, want %v", j, k, got, k/e, sign)
				}
				if k >= e {
					structural++
				}
			}
		}
	}
	if structural == 0 {
		t.Error("cpm selected no structural edge: the structural view is untested")
	}
	if got := importanceViews(InputBoth); !slices.Equal(got, []string{"functional", "structural"}) {
		t.Errorf("views of both: %q", got)
	}
}
