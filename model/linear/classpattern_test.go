package linear

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// classPatternCase is one case of testdata/class_patterns.json.
type classPatternCase struct {
	Name       string      `json:"name"`
	Kind       string      `json:"kind"`
	Classes    int         `json:"classes"`
	Input      Input       `json:"input"`
	Kernel     Kernel      `json:"kernel"`
	P          int         `json:"p"`
	Edges      [][]float64 `json:"edges"`
	Intercept  []float64   `json:"intercept"`
	Weights    [][]float64 `json:"weights"`
	TrainEdges [][]float64 `json:"train_edges"`
	DualCoef   [][]float64 `json:"dual_coef"`
	Pattern    [][]float64 `json:"pattern"` // edge × decision value
}

// participantsOfEdges returns participants whose input matrices hold the
// edge vectors rows (functional edges, then structural ones for "both").
func participantsOfEdges(rows [][]float64, input Input, p int) []*data.Participant {
	e := NumEdges(p)
	var ps []*data.Participant
	for i, row := range rows {
		q := &data.Participant{ID: fmt.Sprint("sub-", i+1)}
		matrix := func(off int) *mat.Dense {
			m := mat.NewDense(p, p, nil)
			for k := range e {
				a, b := EdgePair(p, k)
				m.Set(a, b, row[off+k])
				m.Set(b, a, row[off+k])
			}
			return m
		}
		switch input {
		case InputFunctional:
			q.Functional = matrix(0)
		case InputStructural:
			q.Structural = matrix(0)
		case InputBoth:
			q.Functional, q.Structural = matrix(0), matrix(e)
		}
		ps = append(ps, q)
	}
	return ps
}

// TestClassActivationPatternsMatchNumpy checks the activation patterns of
// Logistic and KernelLogistic, cov(edge, decision value) with the decision
// value the log-odds of class 1 (two classes) or the centred linear
// function of each class (three), against np.cov over the same
// participants and parameters (testdata/make_class_patterns.py), to 1e-12.
func TestClassActivationPatternsMatchNumpy(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("testdata", "class_patterns.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fixture struct {
		Cases []classPatternCase `json:"cases"`
	}
	if err := json.Unmarshal(raw, &fixture); err != nil {
		t.Fatal(err)
	}
	if len(fixture.Cases) != 4 {
		t.Fatalf("%d cases, want 4", len(fixture.Cases))
	}
	for _, tc := range fixture.Cases {
		t.Run(tc.Name, func(t *testing.T) {
			p := tc.P
			ps := participantsOfEdges(tc.Edges, tc.Input, p)
			var in model.ClassInterpreter
			switch tc.Kind {
			case kindLogistic:
				l := NewLogistic(LogisticConfig{Input: tc.Input}, tc.Classes, 1)
				l.p, l.intercept = p, tc.Intercept
				l.weights = mat.NewDense(len(tc.Weights), len(tc.Weights[0]), nil)
				for k, row := range tc.Weights {
					l.weights.SetRow(k, row)
				}
				in = l
			case kindKernelLogistic:
				k := NewKernelLogistic(KernelLogisticConfig{Input: tc.Input, Kernel: tc.Kernel}, tc.Classes, 1)
				x, _, err := kernelEdges(participantsOfEdges(tc.TrainEdges, tc.Input, p), tc.Input, tc.Kernel, p)
				if err != nil {
					t.Fatal(err)
				}
				k.p, k.intercept, k.train = p, tc.Intercept, x
				k.dualCoef = mat.NewDense(len(tc.DualCoef), len(tc.DualCoef[0]), nil)
				for i, row := range tc.DualCoef {
					k.dualCoef.SetRow(i, row)
				}
				in = k
			default:
				t.Fatalf("kind %q", tc.Kind)
			}
			maps, err := in.EdgeImportance(ps)
			if err != nil {
				t.Fatal(err)
			}
			C := model.ExplainedClasses(tc.Classes)
			e := NumEdges(p)
			if views := inputViews(tc.Input); len(maps) != views*C {
				t.Fatalf("%d maps, want %d views × %d decision values", len(maps), views, C)
			}
			var worst float64
			for v := range inputViews(tc.Input) {
				for c := range C {
					m := maps[v*C+c]
					for k := range e {
						a, b := EdgePair(p, k)
						// numpy 1.24 np.cov(x_e, s_c)[0, 1], make_class_patterns.py.
						want := tc.Pattern[v*e+k][c]
						if m.At(a, b) != m.At(b, a) {
							t.Fatalf("view %d, value %d: map not symmetric at (%d, %d)", v, c, a, b)
						}
						worst = math.Max(worst, math.Abs(m.At(a, b)-want))
					}
					for i := range p {
						if m.At(i, i) != 0 {
							t.Fatalf("view %d, value %d: diagonal %v", v, c, m.At(i, i))
						}
					}
				}
			}
			t.Logf("largest difference from numpy: %.3g", worst)
			if worst > 1e-12 {
				t.Errorf("patterns differ from numpy's by up to %.3g, want ≤ 1e-12", worst)
			}
			if _, err := in.EdgeImportance(ps[:1]); err == nil || !errors.Is(err, model.ErrTooFewToExplain) {
				t.Errorf("one participant: error %v, want one wrapping ErrTooFewToExplain", err)
			}
		})
	}
}
