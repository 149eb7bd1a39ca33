package train

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// prepFixture is a numpy fixture of testdata/train (make_targetprep.py,
// make_targetprep_blocks.py) as a cohort: score columns named y0, y1, …;
// confound columns named c0, c1, … and stored in reverse order after a
// covariate no step uses, so that a step must find them by name; and a
// random functional matrix per participant.
type prepFixture struct {
	cohort      *data.Cohort
	confounds   []string // c0, c1, … in the fixture's column order
	blocks      int
	train, test []int
	beta        [][]float64 // per score column, intercept first
	mean, sd    []float64
	zTest       [][]*float64 // per score column, per test row; nil where missing
}

func readPrepFixture(t *testing.T, name string) prepFixture {
	t.Helper()
	fx := readTargetPrepFixture(t, name)
	TB, CB := len(fx.Y[0]), len(fx.Cov[0])
	pf := prepFixture{blocks: max(1, fx.Blocks), train: fx.Train, test: fx.Test,
		beta: fx.Expect.Beta, mean: fx.Expect.Mean, sd: fx.Expect.SD, zTest: fx.Expect.StandardizedTest}
	c := &data.Cohort{Covariates: []string{"unused"}, Regions: []string{"R0", "R1", "R2", "R3"}}
	for k := range TB {
		c.Targets = append(c.Targets, fmt.Sprintf("y%d", k))
	}
	for k := range CB {
		pf.confounds = append(pf.confounds, fmt.Sprintf("c%d", k))
		c.Covariates = append(c.Covariates, fmt.Sprintf("c%d", CB-1-k))
	}
	rng := rand.New(rand.NewPCG(uint64(TB), 7))
	for i := range fx.Y {
		p := &data.Participant{ID: fmt.Sprintf("sub-%02d", i), Covariates: []float64{rng.NormFloat64()}}
		for _, v := range fx.Y[i] {
			s := math.NaN()
			if v != nil {
				s = *v
			}
			p.Scores = append(p.Scores, s)
		}
		for k := range CB {
			p.Covariates = append(p.Covariates, fx.Cov[i][CB-1-k])
		}
		p.Functional = mat.NewDense(4, 4, nil)
		for a := 0; a < 4; a++ {
			for b := a + 1; b < 4; b++ {
				v := rng.NormFloat64()
				p.Functional.Set(a, b, v)
				p.Functional.Set(b, a, v)
			}
		}
		c.Participants = append(c.Participants, p)
	}
	pf.cohort = c
	return pf
}

var prepFixtures = []string{"targetprep.json", "targetprep_blocks.json"}

// targetsPipeline returns the pipeline the runner makes for the fixture.
func (pf prepFixture) targetsPipeline() *Pipeline {
	return &Pipeline{Steps: []Prep{&TargetPrep{Covariates: pf.confounds, Blocks: pf.blocks}}}
}

// edgeCentre is an input step for these tests: it subtracts the training
// participants' mean functional matrix from every functional matrix.
type edgeCentre struct{ Mean *mat.Dense }

func (e *edgeCentre) Name() string { return "edge-centre" }

func (e *edgeCentre) Fit(train *data.Cohort) error {
	r, c := train.Participants[0].Functional.Dims()
	e.Mean = mat.NewDense(r, c, nil)
	for _, p := range train.Participants {
		e.Mean.Add(e.Mean, p.Functional)
	}
	e.Mean.Scale(1/float64(len(train.Participants)), e.Mean)
	return nil
}

func (e *edgeCentre) Apply(c *data.Cohort) (*data.Cohort, error) {
	out := *c
	out.Participants = nil
	for _, p := range c.Participants {
		q := *p
		q.Functional = new(mat.Dense)
		q.Functional.Sub(p.Functional, e.Mean)
		out.Participants = append(out.Participants, &q)
	}
	return &out, nil
}

// affineScores is a target step for these tests that fits nothing: every
// score s becomes A·s + B.
type affineScores struct{ A, B float64 }

func (a *affineScores) Name() string                 { return "affine" }
func (a *affineScores) Fit(train *data.Cohort) error { return nil }

func (a *affineScores) Apply(c *data.Cohort) (*data.Cohort, error) {
	out := *c
	out.Participants = nil
	for _, p := range c.Participants {
		q := *p
		q.Scores = nil
		for _, s := range p.Scores {
			q.Scores = append(q.Scores, a.A*s+a.B)
		}
		out.Participants = append(out.Participants, &q)
	}
	return &out, nil
}

func (a *affineScores) Invert(c *data.Cohort, pred *mat.Dense) error {
	pred.Apply(func(_, _ int, v float64) float64 { return (v - a.B) / a.A }, pred)
	return nil
}

// TestTargetPrepStepAgainstNumPy fits TargetPrep as a step of a Pipeline
// on the training participants of the numpy fixtures and checks its
// coefficients, means, SDs and the test participants' standardized
// scores against numpy.linalg.lstsq and numpy's std with ddof=1
// (testdata/train/make_targetprep.py and make_targetprep_blocks.py,
// Debian's python3-numpy), the confounds found by name in a cohort that
// orders its covariates otherwise.
func TestTargetPrepStepAgainstNumPy(t *testing.T) {
	const tol = 1e-10
	for _, name := range prepFixtures {
		pf := readPrepFixture(t, name)
		p := pf.targetsPipeline()
		if err := p.Fit(subCohort(pf.cohort, pf.train)); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		tp := p.Steps[0].(*TargetPrep)
		test, err := p.Apply(subCohort(pf.cohort, pf.test))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		for col := range pf.cohort.Targets {
			for k, want := range pf.beta[col] {
				if got := tp.Confounds.At(k, col); math.Abs(got-want) > tol*math.Max(1, math.Abs(want)) {
					t.Errorf("%s column %d: beta[%d] = %v, numpy %v", name, col, k, got, want)
				}
			}
			if math.Abs(tp.Mean[col]-pf.mean[col]) > tol || math.Abs(tp.SD[col]-pf.sd[col]) > tol {
				t.Errorf("%s column %d: mean, sd = %v, %v; numpy %v, %v", name, col, tp.Mean[col], tp.SD[col], pf.mean[col], pf.sd[col])
			}
			for r, q := range test.Participants {
				want, got := pf.zTest[col][r], q.Scores[col]
				switch {
				case want == nil && !math.IsNaN(got):
					t.Errorf("%s test row %d column %d: got %v for a missing score", name, r, col, got)
				case want != nil && math.Abs(got-*want) > tol:
					t.Errorf("%s test row %d column %d: %v, numpy %v", name, r, col, got, *want)
				}
			}
		}
	}
}

// testPipelines are pipelines of the step kinds a Pipeline must handle:
// TargetPrep (a Residualizer), input steps and other target steps, in
// several orders.
func testPipelines(pf prepFixture) map[string]*Pipeline {
	targets := func() Prep { return &TargetPrep{Covariates: pf.confounds, Blocks: pf.blocks} }
	return map[string]*Pipeline{
		"targets":             {Steps: []Prep{targets()}},
		"targets then affine": {Steps: []Prep{targets(), &affineScores{A: 2, B: -1}}},
		"affine then targets": {Steps: []Prep{&affineScores{A: 0.5, B: 3}, targets()}},
		"affine":              {Steps: []Prep{&affineScores{A: -3, B: 10}}},
		"inputs and targets":  {Steps: []Prep{&edgeCentre{}, targets(), &edgeCentre{}}},
	}
}

// deepCopy copies c and everything it points to.
func deepCopy(c *data.Cohort) *data.Cohort {
	out := &data.Cohort{Targets: slices.Clone(c.Targets), Covariates: slices.Clone(c.Covariates), Regions: slices.Clone(c.Regions)}
	for _, p := range c.Participants {
		q := *p
		q.Scores, q.Covariates = slices.Clone(p.Scores), slices.Clone(p.Covariates)
		q.Functional = mat.DenseCopyOf(p.Functional)
		out.Participants = append(out.Participants, &q)
	}
	return out
}

// sameBits reports whether a and b hold the same float64 values bit for
// bit (NaN equal to NaN).
func sameBits(a, b []float64) bool {
	return slices.EqualFunc(a, b, func(x, y float64) bool { return math.Float64bits(x) == math.Float64bits(y) })
}

// sameCohort reports where c differs from want, bit for bit; "" when it
// does not.
func sameCohort(c, want *data.Cohort) string {
	if !slices.Equal(c.Targets, want.Targets) || !slices.Equal(c.Covariates, want.Covariates) || !slices.Equal(c.Regions, want.Regions) {
		return "names"
	}
	if len(c.Participants) != len(want.Participants) {
		return "number of participants"
	}
	for i, p := range c.Participants {
		q := want.Participants[i]
		switch {
		case p.ID != q.ID || p.Group != q.Group:
			return p.ID + ": identity"
		case !sameBits(p.Scores, q.Scores):
			return p.ID + ": scores"
		case !sameBits(p.Covariates, q.Covariates):
			return p.ID + ": covariates"
		case !mat.Equal(p.Functional, q.Functional):
			return p.ID + ": functional matrix"
		}
	}
	return ""
}

// TestPrepLeavesInputAlone checks the contract of Prep and Pipeline: Fit,
// Apply, Observed, Unscale and Invert never modify the participants they
// are given, and Apply returns new participants whose scores are not the
// input's, names unchanged.
func TestPrepLeavesInputAlone(t *testing.T) {
	for _, name := range prepFixtures {
		pf := readPrepFixture(t, name)
		for label, p := range testPipelines(pf) {
			c := pf.cohort
			want := deepCopy(c)
			check := func(after string) {
				if diff := sameCohort(c, want); diff != "" {
					t.Fatalf("%s, %s: %s changed the input's %s", name, label, after, diff)
				}
			}
			if err := p.Fit(subCohort(c, pf.train)); err != nil {
				t.Fatalf("%s, %s: %v", name, label, err)
			}
			check("Fit")
			out, err := p.Apply(c)
			if err != nil {
				t.Fatalf("%s, %s: %v", name, label, err)
			}
			check("Apply")
			if !slices.Equal(out.Targets, c.Targets) || !slices.Equal(out.Covariates, c.Covariates) || !slices.Equal(out.Regions, c.Regions) {
				t.Errorf("%s, %s: Apply changed the cohort's names", name, label)
			}
			for i, q := range out.Participants {
				if q == c.Participants[i] {
					t.Fatalf("%s, %s: Apply returned participant %s itself", name, label, q.ID)
				}
				q.Scores[0] = 1e6 // must not reach the input
			}
			check("writing to Apply's scores")
			if _, err := p.Observed(c); err != nil {
				t.Fatal(err)
			}
			check("Observed")
			pred := mat.NewDense(len(c.Participants), len(c.Targets), nil)
			if err := p.Unscale(out, pred); err != nil {
				t.Fatal(err)
			}
			if err := p.Invert(c, pred); err != nil {
				t.Fatal(err)
			}
			check("Unscale and Invert")
		}
	}
}

// TestPipelineInvertUndoesApply checks the definitions of Invert and
// Unscale on the fixtures: Invert maps the scores Apply returns back to
// the scores it was given, and Unscale maps them to Observed, the scores
// with the confound fit removed (to 1e-9 relative: rounding only).
// Participants without scores, as in a cohort to predict, are predicted
// too. Observed is the input's scores without a Residualizer.
func TestPipelineInvertUndoesApply(t *testing.T) {
	close := func(a, b float64) bool {
		return (math.IsNaN(a) && math.IsNaN(b)) || math.Abs(a-b) <= 1e-9*math.Max(1, math.Abs(b))
	}
	for _, name := range prepFixtures {
		pf := readPrepFixture(t, name)
		for label, p := range testPipelines(pf) {
			c := pf.cohort
			if err := p.Fit(subCohort(c, pf.train)); err != nil {
				t.Fatalf("%s, %s: %v", name, label, err)
			}
			out, err := p.Apply(c)
			if err != nil {
				t.Fatal(err)
			}
			z, err := scoreMatrix(out, len(c.Targets))
			if err != nil {
				t.Fatal(err)
			}
			y, _ := scoreMatrix(c, len(c.Targets))
			observed, err := p.Observed(c)
			if err != nil {
				t.Fatal(err)
			}
			if label == "affine" && !sameBits(observed.RawMatrix().Data, y.RawMatrix().Data) {
				t.Errorf("%s, %s: Observed is not the scores", name, label)
			}
			back, scaled := mat.DenseCopyOf(z), mat.DenseCopyOf(z)
			if err := p.Invert(out, back); err != nil {
				t.Fatal(err)
			}
			if err := p.Unscale(out, scaled); err != nil {
				t.Fatal(err)
			}
			for i, q := range c.Participants {
				for col := range c.Targets {
					if !close(back.At(i, col), y.At(i, col)) {
						t.Errorf("%s, %s: %s column %d: Invert gives %v, the score is %v", name, label, q.ID, col, back.At(i, col), y.At(i, col))
					}
					if !close(scaled.At(i, col), observed.At(i, col)) {
						t.Errorf("%s, %s: %s column %d: Unscale gives %v, Observed %v", name, label, q.ID, col, scaled.At(i, col), observed.At(i, col))
					}
				}
			}

			unscored := deepCopy(c)
			for _, q := range unscored.Participants {
				q.Scores = nil
			}
			prepared, err := p.Apply(unscored)
			if err != nil {
				t.Fatalf("%s, %s: participants without scores: %v", name, label, err)
			}
			for _, q := range prepared.Participants {
				if len(q.Scores) != 0 {
					t.Fatalf("%s, %s: Apply gave %s, who had no scores, %d", name, label, q.ID, len(q.Scores))
				}
			}
			if err := p.Invert(prepared, mat.DenseCopyOf(z)); err != nil {
				t.Errorf("%s, %s: Invert for participants without scores: %v", name, label, err)
			}
		}
	}
}

// TestPipelineFitsStepsInOrder: each step is fitted on the training
// participants as the steps before it leave them, so a second edge
// centring, fitted after the first, learns a mean of 0.
func TestPipelineFitsStepsInOrder(t *testing.T) {
	pf := readPrepFixture(t, prepFixtures[0])
	first, second := &edgeCentre{}, &edgeCentre{}
	p := &Pipeline{Steps: []Prep{first, second}}
	if err := p.Fit(subCohort(pf.cohort, pf.train)); err != nil {
		t.Fatal(err)
	}
	if mat.Norm(first.Mean, math.Inf(1)) < 0.01 {
		t.Fatal("the fixture's mean matrix is 0: the test shows nothing")
	}
	if m := mat.Norm(second.Mean, math.Inf(1)); m > 1e-12 {
		t.Errorf("the second step learned a mean of norm %v, want 0", m)
	}
}

// TestPrepFitsOnTrainingOnly is a leakage test: the preparation of a fold
// and what the models learn from are the same, bit for bit, whatever the
// scores, covariates and matrices of the test fold; changing one training
// participant changes them (the test can see a leak).
func TestPrepFitsOnTrainingOnly(t *testing.T) {
	cohort := toyCohort(40, 6, 3, true)
	exp := toyDesign()
	exp.CV.Confounds = []string{"age"}
	splits, err := exp.CV.folds(exp.Seed, cohort).Splits(len(cohort.Participants))
	if err != nil {
		t.Fatal(err)
	}
	split := splits[0]
	rng := rand.New(rand.NewPCG(3, 3))
	// changed returns cohort with participants idx given other scores,
	// covariates and matrices.
	changed := func(idx []int) *data.Cohort {
		c := deepCopy(cohort)
		for _, i := range idx {
			p := c.Participants[i]
			for k := range p.Scores {
				p.Scores[k] = 10*p.Scores[k] + 3
			}
			p.Covariates[0] += 100 * rng.Float64()
			p.Functional.Apply(func(_, _ int, v float64) float64 { return v + rng.NormFloat64() }, p.Functional)
		}
		return c
	}
	// fold returns the fitted preparation of the fold, the scores the
	// models learn (training part, then inner validation part) and the
	// training participants.
	fold := func(c *data.Cohort) (prep []byte, y *mat.Dense, train []*data.Participant) {
		fd, err := prepareFold(exp, c, split, 1)
		if err != nil {
			t.Fatal(err)
		}
		if fd.valid.Len() == 0 {
			t.Fatal("want a fold with an inner validation part")
		}
		if prep, err = json.Marshal(fd.prep); err != nil {
			t.Fatal(err)
		}
		y = mat.NewDense(fd.train.Len()+fd.valid.Len(), len(c.Targets), nil)
		y.Stack(fd.train.Y, fd.valid.Y)
		return prep, y, append(fd.train.Participants, fd.valid.Participants...)
	}
	prep, y, train := fold(cohort)
	leakPrep, leakY, leakTrain := fold(changed(split.Test))
	for i, q := range leakTrain {
		if q.ID != train[i].ID || !mat.Equal(q.Functional, train[i].Functional) {
			t.Fatalf("%s: the test fold changed a training participant's matrix", q.ID)
		}
	}
	if !bytes.Equal(prep, leakPrep) {
		t.Errorf("the test fold changed the fitted preparation:\n%s\n%s", prep, leakPrep)
	}
	if !sameBits(y.RawMatrix().Data, leakY.RawMatrix().Data) {
		t.Error("the test fold changed the scores the models learn")
	}
	trainPrep, _, _ := fold(changed(split.Train[:1]))
	if bytes.Equal(prep, trainPrep) {
		t.Error("changing a training participant left the preparation alone: the test cannot see a leak")
	}
}

// TestPipelineJSONRoundTrip: a fitted pipeline read back from its JSON
// encoding encodes the same and gives the same prepared scores, observed
// scores and mapped predictions, bit for bit.
func TestPipelineJSONRoundTrip(t *testing.T) {
	for _, name := range prepFixtures {
		pf := readPrepFixture(t, name)
		p := pf.targetsPipeline()
		if err := p.Fit(subCohort(pf.cohort, pf.train)); err != nil {
			t.Fatal(err)
		}
		raw, err := json.Marshal(p)
		if err != nil {
			t.Fatal(err)
		}
		var back Pipeline
		if err := json.Unmarshal(raw, &back); err != nil {
			t.Fatalf("%s: %v\n%s", name, err, raw)
		}
		again, err := json.Marshal(&back)
		if err != nil || !bytes.Equal(raw, again) {
			t.Fatalf("%s: encoded again %s (%v), first %s", name, again, err, raw)
		}
		test := subCohort(pf.cohort, pf.test)
		results := func(p *Pipeline) []float64 {
			out, err := p.Apply(test)
			if err != nil {
				t.Fatal(err)
			}
			z, _ := scoreMatrix(out, len(test.Targets))
			obs, err := p.Observed(test)
			if err != nil {
				t.Fatal(err)
			}
			pred := mat.NewDense(len(test.Participants), len(test.Targets), nil)
			pred.Apply(func(i, j int, _ float64) float64 { return 0.1*float64(i) - 0.3*float64(j) }, pred)
			scaled, score := mat.DenseCopyOf(pred), mat.DenseCopyOf(pred)
			if err := p.Unscale(out, scaled); err != nil {
				t.Fatal(err)
			}
			if err := p.Invert(out, score); err != nil {
				t.Fatal(err)
			}
			var all []float64
			for _, m := range []*mat.Dense{z, obs, scaled, score} {
				all = append(all, m.RawMatrix().Data...)
			}
			return all
		}
		a, b := results(p), results(&back)
		if !sameBits(a, b) {
			t.Errorf("%s: the decoded pipeline gives other results", name)
		}
	}
}

// TestPipelineJSONErrors: a saved pipeline whose parts do not fit
// together is an error naming the step and the key.
func TestPipelineJSONErrors(t *testing.T) {
	tests := []struct {
		name, doc, want string
	}{
		{"unknown step", `[{"step": "harmonize", "params": {}}]`, `step 1: unknown preparation step "harmonize"`},
		{"no targets", `[{"step": "targets", "params": {"mean": [], "sd": []}}]`, "step 1 (targets): mean: no targets"},
		{"sd length", `[{"step": "targets", "params": {"mean": [1, 2], "sd": [1]}}]`, "sd has 1 values, mean 2"},
		{"sd zero", `[{"step": "targets", "params": {"mean": [1], "sd": [0]}}]`, "sd[0] is 0"},
		{"blocks", `[{"step": "targets", "params": {"blocks": 3, "mean": [1, 2], "sd": [1, 1]}}]`, "blocks: 2 targets do not make 3 blocks"},
		{"covariate means", `[{"step": "targets", "params": {"covariates": ["age"], "mean": [1], "sd": [1], "confound_coef": [[1], [2]]}}]`, "covariate_mean has 0 values for 1 covariates"},
		{"coefficient rows", `[{"step": "targets", "params": {"covariates": ["age"], "covariate_mean": [30], "mean": [1], "sd": [1], "confound_coef": [[1]]}}]`, "confound_coef has 1 rows, want 2"},
		{"coefficient row", `[{"step": "targets", "params": {"covariates": ["age"], "covariate_mean": [30], "mean": [1, 2], "sd": [1, 1], "confound_coef": [[1, 2], [3]]}}]`, "confound_coef row 1 has 1 values, want 2"},
		{"coefficients alone", `[{"step": "targets", "params": {"mean": [1], "sd": [1], "confound_coef": [[1]]}}]`, "confound_coef without covariates"},
	}
	for _, tt := range tests {
		var p Pipeline
		err := json.Unmarshal([]byte(tt.doc), &p)
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: error %v, want one containing %q", tt.name, err, tt.want)
		}
	}
}

// TestLoadModelVersions: fitted.json of an unknown format or version, or
// of version 2 or 3 without a usable prep, is an error naming the file.
func TestLoadModelVersions(t *testing.T) {
	tests := []struct {
		name, doc, want string
	}{
		{"format", `{"format": "other", "version": 2}`, `format "other" version 2, want skein-fitted version 1 to 3`},
		{"newer", `{"format": "skein-fitted", "version": 4}`, "version 4, want skein-fitted version 1 to 3"},
		{"no prep", `{"format": "skein-fitted", "version": 2, "kind": "ridge"}`, "no prep"},
		{"unknown step", `{"format": "skein-fitted", "version": 2, "prep": [{"step": "x", "params": {}}]}`, `unknown preparation step "x"`},
		{"version 1 scaling", `{"format": "skein-fitted", "version": 1, "targets": ["a"], "target_scaling": {"mean": [1, 2], "sd": [1, 1]}}`, "target_scaling does not match the 1 targets"},
		{"version 1 coefficients", `{"format": "skein-fitted", "version": 1, "targets": ["a"], "confounds": ["age"],
			"confound_coef": [[1]], "target_scaling": {"covariate_mean": [30], "mean": [1], "sd": [1]}}`, "confound_coef has 1 rows, want 2"},
	}
	for _, tt := range tests {
		dir := t.TempDir()
		path := filepath.Join(dir, FittedFile)
		if err := os.WriteFile(path, []byte(tt.doc), 0o644); err != nil {
			t.Fatal(err)
		}
		_, err := LoadModel(dir)
		if err == nil || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: error %v, want one naming %s and containing %q", tt.name, err, path, tt.want)
		}
	}
}
