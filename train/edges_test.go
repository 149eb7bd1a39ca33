package train

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"reflect"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model/graphnet"
)

// TestEdgeScalerAgainstScikitLearn checks Fit, Apply and Reference
// against testdata/train/edgescaler.json, made by make_edgescaler.py with
// scikit-learn's StandardScaler on the upper-triangle edge vectors
// (population SD; a constant edge gets SD 1). Beyond StandardScaler,
// Apply mirrors each edge to (j, i) and sets the diagonal to 0 (ours).
func TestEdgeScalerAgainstScikitLearn(t *testing.T) {
	raw, err := os.ReadFile("../testdata/train/edgescaler.json")
	if err != nil {
		t.Fatal(err)
	}
	type modalityFixture struct {
		Train, Test    [][][]float64
		Mean, SD       []float64
		TestEdges      [][]float64 `json:"test_edges"`
		ReferenceEdges []float64   `json:"reference_edges"`
	}
	var fix struct {
		P                      int
		Functional, Structural modalityFixture
	}
	if err := json.Unmarshal(raw, &fix); err != nil {
		t.Fatal(err)
	}
	cohort := func(fc, sc [][][]float64) *data.Cohort {
		c := &data.Cohort{Regions: make([]string, fix.P)}
		for k := range fc {
			c.Participants = append(c.Participants, &data.Participant{ID: string(rune('a' + k)),
				Functional: denseOf(fc[k]), Structural: denseOf(sc[k])})
		}
		return c
	}
	train := cohort(fix.Functional.Train, fix.Structural.Train)
	test := cohort(fix.Functional.Test, fix.Structural.Test)
	e := &EdgeScaler{Functional: true, Structural: true}
	if err := e.Fit(train); err != nil {
		t.Fatal(err)
	}
	const tol = 1e-12
	near := func(what string, got, want []float64) {
		t.Helper()
		if len(got) != len(want) {
			t.Fatalf("%s: %d values, want %d", what, len(got), len(want))
		}
		for i := range got {
			if math.Abs(got[i]-want[i]) > tol*math.Max(1, math.Abs(want[i])) {
				t.Errorf("%s[%d] = %v, scikit-learn %v", what, i, got[i], want[i])
			}
		}
	}
	near("functional mean", e.FunctionalMean, fix.Functional.Mean)
	near("functional SD", e.FunctionalSD, fix.Functional.SD)
	near("structural mean", e.StructuralMean, fix.Structural.Mean)
	near("structural SD", e.StructuralSD, fix.Structural.SD)
	z, err := e.Apply(test)
	if err != nil {
		t.Fatal(err)
	}
	ref, err := e.Reference(test)
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range []struct {
		name   string
		get    func(*data.Participant) *mat.Dense
		fix    modalityFixture
		source [][][]float64
	}{
		{"functional", func(p *data.Participant) *mat.Dense { return p.Functional }, fix.Functional, fix.Functional.Test},
		{"structural", func(p *data.Participant) *mat.Dense { return p.Structural }, fix.Structural, fix.Structural.Test},
	} {
		for k := range test.Participants {
			near(m.name+" test edges", upper(m.get(z.Participants[k])), m.fix.TestEdges[k])
			near(m.name+" reference edges", upper(m.get(ref.Participants[k])), m.fix.ReferenceEdges)
			zm := m.get(z.Participants[k])
			for i := range fix.P {
				if zm.At(i, i) != 0 {
					t.Errorf("%s participant %d: diagonal (%d, %d) = %v, want 0", m.name, k, i, i, zm.At(i, i))
				}
				for j := range fix.P {
					if zm.At(i, j) != zm.At(j, i) {
						t.Errorf("%s participant %d: (%d, %d) = %v but (%d, %d) = %v", m.name, k, i, j, zm.At(i, j), j, i, zm.At(j, i))
					}
				}
			}
			if !reflect.DeepEqual(m.get(test.Participants[k]), denseOf(m.source[k])) {
				t.Errorf("%s participant %d: Apply modified its input", m.name, k)
			}
		}
	}
	// Edge (0, 3) of the functional matrices is constant on the training
	// participants: SD 1, centred to exactly 0 for a participant at the
	// constant.
	if e.FunctionalSD[2] != 1 {
		t.Errorf("constant edge: SD %v, want 1", e.FunctionalSD[2])
	}
	c0, err := e.Apply(&data.Cohort{Participants: train.Participants[:1], Regions: train.Regions})
	if err != nil {
		t.Fatal(err)
	}
	if v := c0.Participants[0].Functional.At(0, 3); v != 0 {
		t.Errorf("constant edge of a training participant standardizes to %v, want 0", v)
	}
}

// TestEdgeScalerErrors: a participant without a standardized modality's
// matrix, or with one of the wrong size, is an error naming it.
func TestEdgeScalerErrors(t *testing.T) {
	c := toyCohort(6, 4, 1, false)
	e := &EdgeScaler{Structural: true}
	if err := e.Fit(c); err == nil || !contains(err.Error(), "sub-000", "structural") {
		t.Errorf("Fit without structural matrices: %v", err)
	}
	e = &EdgeScaler{Functional: true}
	if err := e.Fit(c); err != nil {
		t.Fatal(err)
	}
	c.Participants[2].Functional = mat.NewDense(3, 3, nil)
	if _, err := e.Apply(c); err == nil || !contains(err.Error(), "sub-002", "3 × 3", "4 × 4") {
		t.Errorf("Apply of a 3 × 3 matrix: %v", err)
	}
	if _, err := (&EdgeScaler{Functional: true, P: 4}).Apply(c); err == nil {
		t.Error("Apply of an unfitted step: no error")
	}
}

// TestEdgeScalerFitsOnTrainingOnly: the fold's per-edge means and SDs
// do not change when the test participants' matrices do, and do when a
// training participant's does (the test sees a leak if there is one).
func TestEdgeScalerFitsOnTrainingOnly(t *testing.T) {
	exp := toyDesign(tinyNetwork("net"))
	split := Split{Train: []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11}, Test: []int{12, 13, 14, 15}}
	edges := func(change int) *EdgeScaler {
		c := toyCohort(16, 5, 2, false)
		if change >= 0 {
			f := mat.DenseCopyOf(c.Participants[change].Functional)
			f.Scale(10, f)
			c.Participants[change].Functional = f
		}
		fd, err := prepareFold(exp, c, split, 1)
		if err != nil {
			t.Fatal(err)
		}
		if fd.edges == nil || !fd.edges.Functional || fd.edges.Structural {
			t.Fatalf("fold's edge scaler %+v, want one for the functional matrices", fd.edges)
		}
		return fd.edges
	}
	base := edges(-1)
	for _, i := range split.Test {
		if !reflect.DeepEqual(edges(i), base) {
			t.Errorf("changing test participant %d changed the fitted means or SDs", i)
		}
	}
	if reflect.DeepEqual(edges(3), base) {
		t.Error("changing training participant 3 changed nothing")
	}
}

// TestEdgeScalingOnlyForNetworks: a ridge's predictions are the same bits
// with and without a network (whose inputs are standardized) in the run,
// a network with standardize_inputs = false gets the fold as it is, and a
// network's fold ends its Pipeline with the scaler.
func TestEdgeScalingOnlyForNetworks(t *testing.T) {
	cohort := toyCohort(24, 5, 4, false)
	ridge := ridgeAndMean()[1]
	run := func(models ...ModelConfig) *Result {
		res, err := (&Runner{Design: toyDesign(models...), Cohort: cohort, Jobs: 1}).Run(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		return res
	}
	alone := run(ridge).Predictions
	withNet := run(ridge, tinyNetwork("net")).Predictions[:len(alone)]
	if !reflect.DeepEqual(alone, withNet) {
		t.Error("a network in the run changed the ridge's predictions")
	}
	raw := tinyNetwork("raw")
	raw.Network.StandardizeInputs = new(false)
	exp := toyDesign(tinyNetwork("net"), raw, ridge)
	fd, err := prepareFold(exp, cohort, Split{Train: []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}, Test: []int{10, 11}}, 1)
	if err != nil {
		t.Fatal(err)
	}
	for _, cfg := range exp.Models {
		got, err := fd.forModel(cfg)
		if err != nil {
			t.Fatal(err)
		}
		wantScaled := cfg.Name == "net"
		if (got != fd) != wantScaled || (got.scaler != nil) != wantScaled || (len(got.prep.Steps) == 2) != wantScaled {
			t.Errorf("%s: scaled %v, want %v", cfg.Name, got != fd, wantScaled)
		}
		if wantScaled {
			if _, ok := got.prep.Steps[1].(*EdgeScaler); !ok || got.test[0].Functional == fd.test[0].Functional {
				t.Errorf("%s: the fold's Pipeline %v does not end in the scaler, or the test participants are not scaled", cfg.Name, got.prep.Steps)
			}
		}
	}
}

// TestPipelineJSONWithEdges: a Pipeline of a TargetPrep and an EdgeScaler
// encoded and decoded applies as the original (the fitted.json round trip
// skein predict relies on).
func TestPipelineJSONWithEdges(t *testing.T) {
	c := toyCohort(12, 5, 5, false)
	p := &Pipeline{Steps: []Prep{&TargetPrep{Blocks: 1}, &EdgeScaler{Functional: true}}}
	if err := p.Fit(c); err != nil {
		t.Fatal(err)
	}
	raw, err := json.Marshal(p)
	if err != nil {
		t.Fatal(err)
	}
	var back Pipeline
	if err := json.Unmarshal(raw, &back); err != nil {
		t.Fatal(err)
	}
	want, err := p.Apply(c)
	if err != nil {
		t.Fatal(err)
	}
	got, err := back.Apply(c)
	if err != nil {
		t.Fatal(err)
	}
	for i, w := range want.Participants {
		g := got.Participants[i]
		// Scores compared as text: a missing score is NaN, unequal to itself.
		if !reflect.DeepEqual(g.Functional, w.Functional) || fmt.Sprint(g.Scores) != fmt.Sprint(w.Scores) {
			t.Errorf("participant %s: the decoded Pipeline applies differently", w.ID)
		}
	}
}

// tinyNetwork is a network small enough for tests of the runner.
func tinyNetwork(name string) ModelConfig {
	cfg := ModelConfig{Name: name, Network: &graphnet.Config{
		Branches: []graphnet.BranchConfig{{Input: "functional", Layers: []graphnet.LayerConfig{
			{Kind: "e2n", Channels: 2}, {Kind: "n2g", Size: 4},
		}}},
		Epochs: new(2),
	}}
	cfg.SetDefaults()
	return cfg
}

func denseOf(rows [][]float64) *mat.Dense {
	m := mat.NewDense(len(rows), len(rows), nil)
	for i, r := range rows {
		m.SetRow(i, r)
	}
	return m
}

// upper returns the entries i < j of m, row-major.
func upper(m *mat.Dense) []float64 {
	p, _ := m.Dims()
	var out []float64
	for i := range p {
		for j := i + 1; j < p; j++ {
			out = append(out, m.At(i, j))
		}
	}
	return out
}

// contains reports whether s contains every one of subs.
func contains(s string, subs ...string) bool {
	for _, sub := range subs {
		if !strings.Contains(s, sub) {
			return false
		}
	}
	return true
}
