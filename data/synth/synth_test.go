package synth_test

import (
	"math"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
)

func generate(t *testing.T, cfg synth.Config) *synth.Cohort {
	t.Helper()
	c, err := synth.Generate(cfg)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func scores(c *synth.Cohort, k int) []float64 {
	y := make([]float64, len(c.Participants))
	for i, p := range c.Participants {
		y[i] = p.Scores[k]
	}
	return y
}

// upper returns the strict upper triangle of m, row by row.
func upper(m *mat.Dense, f func(float64) float64) []float64 {
	p, _ := m.Dims()
	var v []float64
	for i := range p {
		for j := i + 1; j < p; j++ {
			v = append(v, f(m.At(i, j)))
		}
	}
	return v
}

func identity(v float64) float64 { return v }

// TestCeiling checks that the planted signal's correlation with each score
// agrees with the stated ceiling r = 1/√(1 + motion weight² + noise SD²)
// (the definition of the Pearson correlation of s with s + independent
// noise; common practice, no source). The standard error of r at n = 1000
// is about (1 − r²)/√n ≈ 0.012, so the bound 0.05 is loose.
func TestCeiling(t *testing.T) {
	for _, cfg := range []synth.Config{
		{N: 1000, P: 16, Seed: 1, Ceiling: 0.8},
		{N: 1000, P: 16, Seed: 2, Ceiling: 0.5, Targets: 3, Motion: 0.4, StructuralShare: 0.4},
		{N: 1000, P: 16, Seed: 3, Ceiling: 0.9, FamilySize: 3, TimePoints: 100},
	} {
		c := generate(t, cfg)
		for k, pt := range c.Truth {
			want := 1 / math.Sqrt(1+pt.MotionWeight*pt.MotionWeight+pt.NoiseSD*pt.NoiseSD)
			if math.Abs(pt.Ceiling-cfg.Ceiling) > 1e-12 || math.Abs(want-cfg.Ceiling) > 1e-12 {
				t.Errorf("seed %d, %s: ceiling %v (formula %v), want %v", cfg.Seed, pt.Target, pt.Ceiling, want, cfg.Ceiling)
			}
			got := stat.Correlation(pt.Signal, scores(c, k), nil)
			if math.Abs(got-pt.Ceiling) > 0.05 {
				t.Errorf("seed %d, %s: r(signal, score) = %.3f, ceiling %.3f", cfg.Seed, pt.Target, got, pt.Ceiling)
			}
			// The stated signal is what PlantedSignal recomputes from the matrices.
			if again := synth.PlantedSignal(c.Participants, pt); !slices.Equal(again, pt.Signal) {
				t.Errorf("%s: PlantedSignal does not reproduce Truth.Signal", pt.Target)
			}
			if len(pt.Positive) == 0 || len(pt.Negative) == 0 {
				t.Errorf("%s: planted %d positive and %d negative edges, want both", pt.Target, len(pt.Positive), len(pt.Negative))
			}
			if (cfg.StructuralShare > 0) != (len(pt.StructuralPositive) > 0) {
				t.Errorf("%s: structural share %v but %d structural edges", pt.Target, cfg.StructuralShare, len(pt.StructuralPositive))
			}
		}
	}
}

// TestPlantedEdgesCarrySignal checks that every planted functional edge,
// taken alone, correlates with the score in its planted direction.
func TestPlantedEdgesCarrySignal(t *testing.T) {
	c := generate(t, synth.Config{N: 400, P: 24, Seed: 5})
	pt := c.Truth[0]
	y := scores(c, 0)
	edgeValues := func(e synth.Edge) []float64 {
		v := make([]float64, len(c.Participants))
		for i, p := range c.Participants {
			v[i] = math.Atanh(p.Functional.At(e.I, e.J))
		}
		return v
	}
	for _, e := range pt.Positive {
		if r := stat.Correlation(edgeValues(e), y, nil); r < 0.15 {
			t.Errorf("positive edge %v: r = %.3f with the score", e, r)
		}
	}
	for _, e := range pt.Negative {
		if r := stat.Correlation(edgeValues(e), y, nil); r > -0.15 {
			t.Errorf("negative edge %v: r = %.3f with the score", e, r)
		}
	}
}

// TestMatricesAreValid checks the contract of the raw matrices.
func TestMatricesAreValid(t *testing.T) {
	c := generate(t, synth.Config{N: 20, P: 12, Seed: 7, Motion: 0.5})
	if c.P() != 12 || len(c.Participants) != 20 {
		t.Fatalf("got %d participants and %d regions", len(c.Participants), c.P())
	}
	for _, p := range c.Participants {
		for i := range 12 {
			if p.Functional.At(i, i) != 1 || p.Structural.At(i, i) != 0 {
				t.Fatalf("%s: diagonal %v (fc), %v (sc)", p.ID, p.Functional.At(i, i), p.Structural.At(i, i))
			}
			for j := range 12 {
				f, s := p.Functional.At(i, j), p.Structural.At(i, j)
				if f != p.Functional.At(j, i) || s != p.Structural.At(j, i) {
					t.Fatalf("%s: not symmetric at %d, %d", p.ID, i, j)
				}
				if !(f >= -1 && f <= 1) || math.Abs(f*1e6-math.Round(f*1e6)) > 1e-6 {
					t.Fatalf("%s: fc %v at %d, %d is not a correlation to 6 decimals", p.ID, f, i, j)
				}
				if !(s >= 0) || s != math.Round(s) {
					t.Fatalf("%s: sc %v at %d, %d is not a count", p.ID, s, i, j)
				}
			}
		}
	}
}

// TestFunctionArisesFromStructure checks that the two views are related:
// across edges, a participant's correlation grows with ln(1 + count).
func TestFunctionArisesFromStructure(t *testing.T) {
	c := generate(t, synth.Config{N: 30, P: 32, Seed: 11})
	var rs []float64
	for _, p := range c.Participants {
		rs = append(rs, stat.Correlation(upper(p.Functional, math.Atanh), upper(p.Structural, math.Log1p), nil))
	}
	if mean := stat.Mean(rs, nil); mean < 0.3 {
		t.Errorf("mean r(fc edge, log1p sc edge) = %.3f, want clearly positive", mean)
	}
}

// TestNull checks that null scores are uncorrelated with every functional
// edge: with n = 1000, |r| beyond 5/√n ≈ 0.16 has probability below 1e-6
// per edge under independence.
func TestNull(t *testing.T) {
	c := generate(t, synth.Config{N: 1000, P: 12, Seed: 13, Null: true})
	if pt := c.Truth[0]; pt.Ceiling != 0 || pt.Signal != nil || len(pt.Positive) != 0 {
		t.Fatalf("null truth: %+v", pt)
	}
	y := scores(c, 0)
	bound := 5 / math.Sqrt(1000)
	for e := range 66 {
		edge := make([]float64, len(c.Participants))
		for i, p := range c.Participants {
			edge[i] = upper(p.Functional, identity)[e]
		}
		if r := stat.Correlation(edge, y, nil); math.Abs(r) > bound {
			t.Errorf("edge %d: r = %.3f with a null score", e, r)
		}
	}
}

// TestMotionConfound checks that motion raises the mean correlation and
// the scores.
func TestMotionConfound(t *testing.T) {
	c := generate(t, synth.Config{N: 500, P: 12, Seed: 17, Motion: 0.8, Null: true})
	motion, meanFC := make([]float64, 500), make([]float64, 500)
	for i, p := range c.Participants {
		motion[i] = p.Covariates[2]
		meanFC[i] = stat.Mean(upper(p.Functional, identity), nil)
	}
	if r := stat.Correlation(motion, meanFC, nil); r < 0.3 {
		t.Errorf("r(motion, mean fc) = %.3f, want clearly positive", r)
	}
	if r := stat.Correlation(motion, scores(c, 0), nil); r < 0.3 {
		t.Errorf("r(motion, score) = %.3f, want clearly positive", r)
	}
}

// TestSiblings checks that families share a group and, beyond chance,
// their scores.
func TestSiblings(t *testing.T) {
	c := generate(t, synth.Config{N: 600, P: 12, Seed: 19, FamilySize: 2, Null: true})
	if !c.Grouped() {
		t.Fatal("not grouped")
	}
	var first, second []float64
	for i := 0; i < len(c.Participants); i += 2 {
		a, b := c.Participants[i], c.Participants[i+1]
		if a.Group != b.Group || a.Group == "" {
			t.Fatalf("%s and %s: groups %q and %q, want one family", a.ID, b.ID, a.Group, b.Group)
		}
		if i > 0 && a.Group == c.Participants[i-1].Group {
			t.Fatalf("%s: family %s has more than 2 members", a.ID, a.Group)
		}
		first, second = append(first, a.Scores[0]), append(second, b.Scores[0])
	}
	// Shared noise has correlation 0.5 within a family.
	if r := stat.Correlation(first, second, nil); r < 0.35 || r > 0.65 {
		t.Errorf("sibling score correlation %.3f, want about 0.5", r)
	}
	unrelated := generate(t, synth.Config{N: 20, P: 12, Seed: 19})
	if unrelated.Grouped() {
		t.Error("FamilySize 0 gave groups")
	}
}

func TestMissing(t *testing.T) {
	c := generate(t, synth.Config{N: 500, P: 8, Seed: 23, Missing: 0.2})
	missing := 0
	for _, p := range c.Participants {
		for _, s := range p.Scores {
			if math.IsNaN(s) {
				missing++
			}
		}
	}
	// Binomial(1000, 0.2): mean 200, SD 12.6.
	if missing < 150 || missing > 250 {
		t.Errorf("%d of 1000 scores missing, want about 200", missing)
	}
}

func TestDeterministic(t *testing.T) {
	cfg := synth.Config{N: 12, P: 10, Seed: 29, FamilySize: 3, Motion: 0.2}
	a, b := generate(t, cfg), generate(t, cfg)
	cfg.Seed++
	other := generate(t, cfg)
	for i := range a.Participants {
		pa, pb := a.Participants[i], b.Participants[i]
		if !mat.Equal(pa.Functional, pb.Functional) || !mat.Equal(pa.Structural, pb.Structural) || !slices.Equal(pa.Scores, pb.Scores) {
			t.Fatalf("%s differs between two runs with the same seed", pa.ID)
		}
	}
	if mat.Equal(a.Participants[0].Functional, other.Participants[0].Functional) {
		t.Error("different seeds gave the same matrices")
	}
}

func TestConfigErrors(t *testing.T) {
	for _, tc := range []struct {
		cfg  synth.Config
		want string
	}{
		{synth.Config{N: 5, P: 10}, "N = 5"},
		{synth.Config{N: 20, P: 4}, "P = 4"},
		{synth.Config{N: 20, P: 10, Targets: 9}, "Targets = 9"},
		{synth.Config{N: 20, P: 10, Ceiling: 1.5}, "Ceiling = 1.5"},
		{synth.Config{N: 20, P: 10, Missing: 1}, "Missing = 1"},
		{synth.Config{N: 20, P: 10, StructuralShare: -0.1}, "StructuralShare = -0.1"},
		{synth.Config{N: 20, P: 10, TimePoints: 5}, "TimePoints = 5"},
		{synth.Config{N: 20, P: 10, Ceiling: 0.9, Motion: 1}, "cannot be reached"},
	} {
		_, err := synth.Generate(tc.cfg)
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%+v: got %v, want an error with %q", tc.cfg, err, tc.want)
		}
	}
}

// The synthetic cohort is a valid input for skein's preprocessing.
func TestPreprocessable(t *testing.T) {
	c := generate(t, synth.Config{N: 10, P: 8, Seed: 31})
	var pre data.Preprocess
	pre.SetDefaults()
	for _, p := range c.Participants {
		if err := pre.Functional(mat.DenseCopyOf(p.Functional)); err != nil {
			t.Fatal(err)
		}
		if err := pre.Structural(mat.DenseCopyOf(p.Structural)); err != nil {
			t.Fatal(err)
		}
	}
}
