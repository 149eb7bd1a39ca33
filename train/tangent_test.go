package train

import (
	"context"
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
	"github.com/skein-neuro/skein/data/connectivity"
	"github.com/skein-neuro/skein/model/linear"
)

// tangentFixture is data/connectivity/testdata/estimators.json, written
// by make_estimators.py beside it with Debian's numpy and scipy: six 5 × 5
// sample covariances, their log-Euclidean mean (scipy.linalg.expm of the
// mean scipy.linalg.logm), their geometric mean (the unit-step
// fixed-point iteration from the arithmetic mean with scipy's sqrtm,
// logm and expm) and every covariance's tangent matrix at each mean
// (scipy.linalg.logm(M^-1/2 C M^-1/2)).
type tangentFixture struct {
	Covariance          [][][]float64 `json:"covariance"`
	LogEuclideanMean    [][]float64   `json:"log_euclidean_mean"`
	GeometricMean       [][]float64   `json:"geometric_mean"`
	TangentLogEuclidean [][][]float64 `json:"tangent_log_euclidean"`
	TangentGeometric    [][][]float64 `json:"tangent_geometric"`
}

func readTangentFixture(t *testing.T) tangentFixture {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("..", "data", "connectivity", "testdata", "estimators.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fx tangentFixture
	if err := json.Unmarshal(raw, &fx); err != nil {
		t.Fatal(err)
	}
	return fx
}

// covarianceCohort returns a cohort whose functional matrices are the
// covariances, as data.Check gives them for estimator "tangent".
func covarianceCohort(covs [][][]float64, set data.SeriesSettings) *data.Cohort {
	p := len(covs[0])
	c := &data.Cohort{Targets: []string{"score"}, Regions: data.DefaultRegions(p), Series: &set}
	for i, cv := range covs {
		m := mat.NewDense(p, p, nil)
		for a := range p {
			m.SetRow(a, cv[a])
		}
		c.Participants = append(c.Participants, &data.Participant{ID: fmt.Sprintf("sub-%02d", i+1), Functional: m, Scores: []float64{float64(i)}})
	}
	return c
}

// TestTangentSpaceAgainstScipy fits the step on the fixture's
// covariances with each mean and compares the reference and every
// embedded matrix (√2 t_ij off the diagonal, t_ii or 0 on it) with
// numpy/scipy's (make_estimators.py). The geometric mean stops at the
// step's default tolerance (1e-7), the script's at 1e-12: hence 1e-6.
func TestTangentSpaceAgainstScipy(t *testing.T) {
	fx := readTangentFixture(t)
	tests := []struct {
		mean     data.TangentMean
		diagonal data.TangentDiagonal
		ref      [][]float64
		tangent  [][][]float64
		tol      float64
	}{
		{data.TangentLogEuclidean, data.DiagonalDrop, fx.LogEuclideanMean, fx.TangentLogEuclidean, 1e-9},
		{data.TangentLogEuclidean, data.DiagonalKeep, fx.LogEuclideanMean, fx.TangentLogEuclidean, 1e-9},
		{data.TangentGeometric, data.DiagonalKeep, fx.GeometricMean, fx.TangentGeometric, 1e-6},
	}
	for _, tc := range tests {
		t.Run(fmt.Sprintf("%s, diagonal %s", tc.mean, tc.diagonal), func(t *testing.T) {
			set := data.SeriesSettings{Estimator: data.EstimatorTangent, Shrinkage: data.ShrinkageNone, TangentMean: tc.mean, TangentDiagonal: tc.diagonal}
			c := covarianceCohort(fx.Covariance, set)
			s := newTangentSpace(c.Series)
			if err := s.Fit(c); err != nil {
				t.Fatal(err)
			}
			p := len(tc.ref)
			for k, v := range s.Reference {
				if d := math.Abs(v - tc.ref[k/p][k%p]); d > tc.tol {
					t.Fatalf("reference entry (%d, %d) = %v, scipy %v", k/p, k%p, v, tc.ref[k/p][k%p])
				}
			}
			out, err := s.Apply(c)
			if err != nil {
				t.Fatal(err)
			}
			for i, pt := range out.Participants {
				for a := range p {
					for b := range p {
						want := math.Sqrt2 * tc.tangent[i][a][b]
						if a == b {
							want = 0
							if tc.diagonal == data.DiagonalKeep {
								want = tc.tangent[i][a][a]
							}
						}
						if d := math.Abs(pt.Functional.At(a, b) - want); d > 10*tc.tol {
							t.Fatalf("participant %s: entry (%d, %d) = %v, scipy %v", pt.ID, a, b, pt.Functional.At(a, b), want)
						}
					}
				}
			}
			if out.Series != nil || c.Series == nil || c.Participants[0].Functional == out.Participants[0].Functional {
				t.Error("Apply changed its input or left the output marked as covariances")
			}
		})
	}
}

// TestTangentSpaceJSONAndErrors: a Pipeline with the step survives its
// JSON encoding (skein predict replays it), and cohorts that are not
// covariances of the fitted kind are refused with a message naming the
// key to set.
func TestTangentSpaceJSONAndErrors(t *testing.T) {
	fx := readTangentFixture(t)
	set := data.SeriesSettings{Estimator: data.EstimatorTangent, Shrinkage: data.ShrinkageNone, TangentMean: data.TangentGeometric, TangentDiagonal: data.DiagonalDrop}
	c := covarianceCohort(fx.Covariance, set)
	pl := &Pipeline{Steps: []Prep{&TargetPrep{Blocks: 1}, newTangentSpace(&set)}}
	if err := pl.Fit(c); err != nil {
		t.Fatal(err)
	}
	raw, err := json.Marshal(pl)
	if err != nil {
		t.Fatal(err)
	}
	var back Pipeline
	if err := json.Unmarshal(raw, &back); err != nil {
		t.Fatal(err)
	}
	a, err := pl.Apply(c)
	if err != nil {
		t.Fatal(err)
	}
	b, err := back.Apply(c)
	if err != nil {
		t.Fatal(err)
	}
	for i := range a.Participants {
		if !mat.Equal(a.Participants[i].Functional, b.Participants[i].Functional) {
			t.Fatalf("participant %d: the decoded Pipeline embeds differently", i)
		}
	}
	tests := []struct {
		name string
		edit func(c *data.Cohort)
		want string
	}{
		{"matrices, not series", func(c *data.Cohort) { c.Series = nil }, `estimator = "tangent"`},
		{"other estimator", func(c *data.Cohort) { c.Series = &data.SeriesSettings{Estimator: data.EstimatorCorrelation} }, `estimator = "tangent"`},
		{"other shrinkage", func(c *data.Cohort) { s := set; s.Shrinkage = data.ShrinkageLedoitWolf; c.Series = &s }, `shrinkage = "none"`},
		{"other p", func(c *data.Cohort) { c.Participants[2].Functional = mat.NewDense(3, 3, nil) }, "sub-03"},
	}
	for _, tc := range tests {
		bad := covarianceCohort(fx.Covariance, set)
		tc.edit(bad)
		if _, err := back.Apply(bad); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v, want one saying %q", tc.name, err, tc.want)
		}
	}
}

// seriesCohort returns n participants' covariances of random T × p
// series, each participant's regions mixed by its own matrix, with a
// score that depends on the mixing; seeds[i] draws participant i's series.
func seriesToyCohort(n, p, T int, seeds []uint64, mean data.TangentMean) *data.Cohort {
	set := data.SeriesSettings{Estimator: data.EstimatorTangent, Shrinkage: data.ShrinkageLedoitWolf, TangentMean: mean, TangentDiagonal: data.DiagonalDrop}
	c := &data.Cohort{Targets: []string{"score"}, Regions: data.DefaultRegions(p), Series: &set}
	for i := range n {
		rng := rand.New(rand.NewPCG(seeds[i], 3))
		mix := rng.NormFloat64()
		x := mat.NewDense(T, p, nil)
		for t := range T {
			shared := rng.NormFloat64()
			for j := range p {
				v := rng.NormFloat64()
				if j < 2 {
					v += mix * shared
				}
				x.Set(t, j, v)
			}
		}
		cov, _ := connectivity.LedoitWolf(x)
		c.Participants = append(c.Participants, &data.Participant{ID: fmt.Sprintf("sub-%03d", i), Functional: mat.DenseCopyOf(cov), Scores: []float64{mix*mix + 0.1*rng.NormFloat64()}})
	}
	return c
}

// TestTangentNoLeakage changes the series of a fold's test participants
// and checks that the fold's reference mean does not move, to the last
// bit, and, with ridge cross-validated on both cohorts, that changing the
// series of one test participant moves no other test participant's
// prediction (common practice, no source: the reference is fitted on the
// training fold alone, and embedding a participant reads nothing else).
func TestTangentNoLeakage(t *testing.T) {
	const n, p, T = 40, 6, 50
	seeds := make([]uint64, n)
	for i := range seeds {
		seeds[i] = uint64(i + 1)
	}
	for _, mean := range []data.TangentMean{data.TangentGeometric, data.TangentLogEuclidean} {
		t.Run(string(mean), func(t *testing.T) {
			base := seriesToyCohort(n, p, T, seeds, mean)
			ridge := ModelConfig{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}}
			exp := toyDesign(ridge)
			exp.CV.Repeats = new(1)
			run := func(c *data.Cohort) *Result {
				res, err := (&Runner{Design: exp, Cohort: c, Jobs: 1}).Run(context.Background())
				if err != nil {
					t.Fatal(err)
				}
				return res
			}
			baseRes := run(base)
			for _, split := range baseRes.Splits {
				fd, err := prepareFold(exp, base, split, 1)
				if err != nil {
					t.Fatal(err)
				}
				changedSeeds := slices.Clone(seeds)
				for _, i := range split.Test {
					changedSeeds[i] += 1000
				}
				changed := seriesToyCohort(n, p, T, changedSeeds, mean)
				fd2, err := prepareFold(exp, changed, split, 1)
				if err != nil {
					t.Fatal(err)
				}
				ref := fd.prep.Steps[1].(*TangentSpace).Reference
				ref2 := fd2.prep.Steps[1].(*TangentSpace).Reference
				if !slices.Equal(ref, ref2) {
					t.Fatalf("fold %d: changing the test participants' series moved the training fold's reference mean", split.Fold+1)
				}
				// One test participant's series changed: no other
				// prediction of the fold moves.
				oneSeeds := slices.Clone(seeds)
				moved := split.Test[0]
				oneSeeds[moved] += 1000
				one := seriesToyCohort(n, p, T, oneSeeds, mean)
				for i := range one.Participants {
					if i != moved {
						one.Participants[i].Scores = base.Participants[i].Scores
					}
				}
				res := run(one)
				for k, pr := range res.Predictions {
					if pr.Fold == split.Fold && pr.ParticipantID != base.Participants[moved].ID && pr.Predicted != baseRes.Predictions[k].Predicted {
						t.Fatalf("fold %d: changing %s's series moved the prediction for %s from %v to %v", split.Fold+1, base.Participants[moved].ID, pr.ParticipantID, baseRes.Predictions[k].Predicted, pr.Predicted)
					}
				}
			}
		})
	}
}

// TestTangentThenEdgeScaler: for a network, whose kind standardizes
// edges, the fold's edge means are those of the training participants'
// tangent matrices (the step after the embedding), and a network trains
// on tangent matrices.
func TestTangentThenEdgeScaler(t *testing.T) {
	const n, p, T = 30, 5, 40
	seeds := make([]uint64, n)
	for i := range seeds {
		seeds[i] = uint64(i + 100)
	}
	c := seriesToyCohort(n, p, T, seeds, data.TangentLogEuclidean)
	exp := toyDesign(tinyNetwork("network"))
	exp.CV.Repeats = new(1)
	splits, err := exp.CV.folds(exp.Seed, c).Splits(n)
	if err != nil {
		t.Fatal(err)
	}
	split := splits[0]
	fd, err := prepareFold(exp, c, split, 1)
	if err != nil {
		t.Fatal(err)
	}
	embedded, err := fd.prep.Steps[1].Apply(subCohort(c, split.Train))
	if err != nil {
		t.Fatal(err)
	}
	// Mean of edge (0, 1) over the training participants, as the
	// population formula of EdgeScaler says.
	var mean float64
	for _, pt := range embedded.Participants {
		mean += pt.Functional.At(0, 1)
	}
	mean /= float64(len(embedded.Participants))
	if got := fd.edges.FunctionalMean[0]; math.Abs(got-mean) > 1e-12 {
		t.Errorf("edge (0, 1): the scaler's mean is %v, the embedded training participants' %v", got, mean)
	}
	if _, err := (&Runner{Design: exp, Cohort: c, Jobs: 1}).Run(context.Background()); err != nil {
		t.Fatal(err)
	}
}
