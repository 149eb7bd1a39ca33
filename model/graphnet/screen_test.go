package graphnet

import (
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// TestProductView: the view "product" is the functional and structural
// matrices multiplied entry by entry (numpy's F * S), as a branch's single
// input or as one channel among views.
func TestProductView(t *testing.T) {
	const p = 5
	ps, _ := productCohort(1, p, 3)
	pt := ps[0]
	var want mat.Dense
	want.MulElem(pt.Functional, pt.Structural)
	tests := []struct {
		name    string
		branch  BranchConfig
		channel int
	}{
		{"input", BranchConfig{Input: InputProduct, Layers: layers(n2g(1))}, 0},
		{"view", BranchConfig{Views: []Input{InputFunctional, InputProduct}, Layers: layers(n2g(1))}, 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			net, err := New(testConfig(Float64, tt.branch), p, 1, 1)
			if err != nil {
				t.Fatal(err)
			}
			x, _, err := net.branchInput(net.cfg.Branches[0], "", pt)
			if err != nil {
				t.Fatal(err)
			}
			got := x[tt.channel*p*p:][:p*p]
			if !slices.Equal(got, want.RawMatrix().Data) {
				t.Errorf("channel %d is %v, want F∘S %v", tt.channel, got, want.RawMatrix().Data)
			}
		})
	}
	if fc, sc := testConfig(Float64, tests[0].branch).EdgeScaling(); !fc || !sc {
		t.Errorf("EdgeScaling of a product branch = %v, %v; want both matrices standardized", fc, sc)
	}
}

// TestProductViewLearnsProduct: on productCohort, whose score is a sum of
// F_ij·S_ij over six edges and uncorrelated with every edge, a linear
// read-out of the product view alone predicts held-out scores far above
// chance, where a model linear in the edges does not. The bound (r ≥ 0.8)
// is ours: the truth explains about 99% of the score's variance, and the
// read-out reached r 0.998 when this was written.
func TestProductViewLearnsProduct(t *testing.T) {
	const p, nTrain, nValid, nTest = 8, 240, 60, 100
	ps, y := productCohort(nTrain+nValid+nTest, p, 5)
	train := dataset(ps, y, 0, nTrain)
	valid := dataset(ps, y, nTrain, nTrain+nValid)
	test := dataset(ps, y, nTrain+nValid, nTrain+nValid+nTest)
	cfg := Config{
		Branches:  []BranchConfig{{Input: InputProduct, Layers: []LayerConfig{{Kind: LayerN2G, Size: 1, Activation: ActivationNone}}}},
		Epochs:    new(200),
		Optimizer: OptimizerConfig{Rate: new(1e-2)},
	}
	cfg.SetDefaults()
	net, err := New(cfg, p, 1, 3)
	if err != nil {
		t.Fatal(err)
	}
	if err := net.Fit(context.Background(), train, valid); err != nil {
		t.Fatal(err)
	}
	pred, err := net.Predict(test.Participants)
	if err != nil {
		t.Fatal(err)
	}
	r := stat.Correlation(mat.Col(nil, 0, pred), mat.Col(nil, 0, test.Y), nil)
	lin := linearEdgesR(t, train, test, p)
	t.Logf("test r: product read-out %.3f, linear in the edges %.3f", r, lin)
	if r < 0.8 || r < lin+0.3 {
		t.Errorf("product read-out test r %.3f, linear %.3f: want at least 0.8 and 0.3 above the linear model", r, lin)
	}
}

// screenCohort is plantedCohort's participants with a score of our own,
// y = F_01 − F_23 + F_24 + 0.1·ε, so that the three edges (0,1), (2,3)
// and (2,4) correlate with it far more than any other.
func screenCohort(n, p int) ([]*data.Participant, *mat.Dense) {
	ps, noise := plantedCohort(n, p, 1, 11)
	y := mat.NewDense(n, 1, nil)
	for k, pt := range ps {
		f := pt.Functional
		y.Set(k, 0, f.At(0, 1)-f.At(2, 3)+f.At(2, 4)+0.1*noise.At(k, 0))
	}
	return ps, y
}

// TestScreenKeepsStrongestEdges: a screen of k edges keeps the k edges of
// largest |Pearson r| with the score, each edge's r computed by gonum's
// stat.Correlation over the training participants, per view; every other
// edge of the input is 0, so changing it leaves the prediction as it is.
func TestScreenKeepsStrongestEdges(t *testing.T) {
	const p, n = 7, 80
	ps, y := screenCohort(n, p)
	tests := []struct {
		name   string
		views  []Input
		screen int
	}{
		{"one view, 3 edges", []Input{InputFunctional}, 3},
		{"one view, 10 edges", []Input{InputFunctional}, 10},
		{"two views, 4 edges each", []Input{InputFunctional, InputStructural}, 4},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			cfg := testConfig(Float64, BranchConfig{Views: tt.views, Screen: tt.screen, Layers: layers(e2n(2), n2g(3))})
			net, err := New(cfg, p, 1, 1)
			if err != nil {
				t.Fatal(err)
			}
			if err := net.Fit(context.Background(), dataset(ps, y, 0, n), model.Dataset{}); err != nil {
				t.Fatal(err)
			}
			var want []int
			for c, v := range tt.views {
				type scored struct {
					flat int
					r    float64
				}
				var all []scored
				for i := range p {
					for j := i + 1; j < p; j++ {
						x := make([]float64, n)
						for k, pt := range ps {
							x[k] = map[Input]*mat.Dense{InputFunctional: pt.Functional, InputStructural: pt.Structural}[v].At(i, j)
						}
						all = append(all, scored{c*p*p + i*p + j, math.Abs(stat.Correlation(x, mat.Col(nil, 0, y), nil))})
					}
				}
				slices.SortStableFunc(all, func(a, b scored) int {
					switch {
					case a.r > b.r:
						return -1
					case a.r < b.r:
						return 1
					}
					return 0
				})
				for _, e := range all[:tt.screen] {
					want = append(want, e.flat)
				}
			}
			slices.Sort(want)
			if !slices.Equal(net.screens[0], want) {
				t.Fatalf("kept edges %v, want %v", net.screens[0], want)
			}
			if tt.screen == 3 && !slices.Equal(want, []int{0*p + 1, 2*p + 3, 2*p + 4}) {
				t.Errorf("the three planted edges are not the strongest: %v", want)
			}
			before, err := net.Predict(ps[:1])
			if err != nil {
				t.Fatal(err)
			}
			q := *ps[0]
			q.Functional, q.Structural = mat.DenseCopyOf(q.Functional), mat.DenseCopyOf(q.Structural)
			for i := range p {
				for j := range p {
					if f := i*p + j; i != j && !slices.Contains(want, min(i, j)*p+max(i, j)) && !slices.Contains(want, p*p+min(i, j)*p+max(i, j)) {
						q.Functional.Set(i, j, q.Functional.At(i, j)+float64(f))
						q.Structural.Set(i, j, q.Structural.At(i, j)-float64(f))
					}
				}
			}
			after, err := net.Predict([]*data.Participant{&q})
			if err != nil {
				t.Fatal(err)
			}
			if before.At(0, 0) != after.At(0, 0) {
				t.Errorf("prediction %v moved to %v when only screened-out edges changed", before.At(0, 0), after.At(0, 0))
			}
		})
	}
}

// TestScreenSaved: the kept edges are saved with the network and read
// back, so a loaded network predicts as the fitted one; a manifest whose
// screens do not fit the branches is refused.
func TestScreenSaved(t *testing.T) {
	const p, n = 7, 60
	ps, y := screenCohort(n, p)
	cfg := testConfig(Float64, BranchConfig{Input: InputFunctional, Screen: 3, Layers: layers(e2n(2), n2g(3))})
	net, err := New(cfg, p, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	if err := net.Fit(context.Background(), dataset(ps, y, 0, n), model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := net.Save(dir); err != nil {
		t.Fatal(err)
	}
	back, err := Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	want, _ := net.Predict(ps)
	got, _ := back.Predict(ps)
	if !mat.Equal(got, want) {
		t.Errorf("the loaded network predicts %v, the saved one %v", mat.Formatted(got.T()), mat.Formatted(want.T()))
	}
	raw, err := os.ReadFile(filepath.Join(dir, manifestFile))
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name    string
		screens [][]int
		want    string
	}{
		{"two lists for one branch", [][]int{{1}, {2}}, "2 screens for 1 branches"},
		{"too many edges", [][]int{{1, 2, 3, 4}}, "screens[0]: 4 edges, the branch keeps at most 3"},
		{"lower triangle", [][]int{{1, 7}}, "screens[0][1]: 7 is not an edge i < j"},
		{"out of order", [][]int{{3, 1}}, "screens[0][1]: 1 is not an edge i < j"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var m map[string]any
			if err := json.Unmarshal(raw, &m); err != nil {
				t.Fatal(err)
			}
			m["screens"] = tt.screens
			js, _ := json.Marshal(m)
			os.WriteFile(filepath.Join(dir, manifestFile), js, 0o644)
			_, err := Load(dir)
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("got error %v, want one containing %q", err, tt.want)
			}
		})
	}
}
