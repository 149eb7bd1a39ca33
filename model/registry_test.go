package model_test

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/graphnet"
	"github.com/skein-neuro/skein/model/linear"
)

// kindSettings returns settings that each registered kind builds from,
// before defaults; a kind registered without a case here fails
// TestKinds.
func kindSettings() map[string]model.Settings {
	return map[string]model.Settings{
		"mean":            &linear.MeanConfig{},
		"ridge":           &linear.RidgeConfig{Input: linear.InputBoth, InnerFolds: new(3)},
		"kernel_ridge":    &linear.KernelRidgeConfig{InnerFolds: new(3)},
		"cpm":             &linear.CPMConfig{PThreshold: new(0.05)},
		"majority":        &linear.MajorityConfig{},
		"logistic":        &linear.LogisticConfig{Input: linear.InputBoth, InnerFolds: new(3)},
		"kernel_logistic": &linear.KernelLogisticConfig{InnerFolds: new(3)},
		"network": &graphnet.Config{Epochs: new(3), BatchSize: new(4), Branches: []graphnet.BranchConfig{{
			Layers: []graphnet.LayerConfig{{Kind: "e2n", Channels: 2}, {Kind: "n2g", Size: 3}},
		}}},
	}
}

// tinyCohort is an invented cohort of n participants over p regions, from
// a generator of our own: participant i has a latent z_i ~ N(0, 1); its
// functional matrix is symmetric noise of SD 0.3 plus z_i on the edges of
// region 0; its structural matrix is uniform on [0, 1) and symmetric; its
// two scores are z_i + N(0, 0.25) and −z_i + N(0, 0.25), the second
// missing (NaN) for participant 3.
func tinyCohort(n, p int) ([]*data.Participant, *mat.Dense) {
	rng := rand.New(rand.NewPCG(7, 1))
	ps := make([]*data.Participant, n)
	y := mat.NewDense(n, 2, nil)
	for k := range ps {
		z := rng.NormFloat64()
		f, s := mat.NewDense(p, p, nil), mat.NewDense(p, p, nil)
		for i := range p {
			for j := i + 1; j < p; j++ {
				v := 0.3 * rng.NormFloat64()
				if i == 0 {
					v += z
				}
				w := rng.Float64()
				f.Set(i, j, v)
				f.Set(j, i, v)
				s.Set(i, j, w)
				s.Set(j, i, w)
			}
		}
		ps[k] = &data.Participant{ID: fmt.Sprintf("sub-%02d", k+1), Functional: f, Structural: s}
		y.Set(k, 0, z+0.5*rng.NormFloat64())
		y.Set(k, 1, -z+0.5*rng.NormFloat64())
	}
	y.Set(3, 1, math.NaN())
	return ps, y
}

func part(ps []*data.Participant, y *mat.Dense, from, to int) model.Dataset {
	return model.Dataset{Participants: ps[from:to], Y: mat.DenseCopyOf(y.Slice(from, to, 0, 2))}
}

// TestKinds builds, fits and runs every registered kind on a tiny cohort
// and checks that what the kind declares is what its regressors do: the
// interfaces they implement (ColumnWise, Interpreter, Saver), the number
// of importance maps (one per view of ImportanceViews and target) and, for a
// kind with a loader, that a saved and loaded regressor predicts as the
// fitted one (a round trip; common practice, no source). Its classifiers
// are checked by TestClassifierKinds.
func TestKinds(t *testing.T) {
	const n, p, nTrain, nValid = 30, 5, 18, 6
	ps, y := tinyCohort(n, p)
	train, valid, test := part(ps, y, 0, nTrain), part(ps, y, nTrain, nTrain+nValid), ps[nTrain+nValid:]
	settings := kindSettings()
	var names []string
	for _, k := range model.Kinds() {
		names = append(names, k.Name)
	}
	if want := []string{"cpm", "kernel_logistic", "kernel_ridge", "logistic", "majority", "mean", "network", "ridge"}; !slices.Equal(names, want) {
		t.Errorf("Kinds() = %v, want %v", names, want)
	}
	for _, k := range model.Kinds() {
		t.Run(k.Name, func(t *testing.T) {
			if got, err := model.Lookup(k.Name); err != nil || got.Name != k.Name {
				t.Fatalf("Lookup(%q) = %q, %v", k.Name, got.Name, err)
			}
			s, ok := settings[k.Name]
			if !ok {
				t.Fatalf("no settings for kind %q in kindSettings", k.Name)
			}
			s.SetDefaults()
			if err := s.Validate(); err != nil {
				t.Fatal(err)
			}
			if k.New == nil {
				if k.NewClassifier == nil || k.Load != nil || k.ColumnWise || k.Importance.Method != "" {
					t.Errorf("has no New, but declares NewClassifier %v, Load %v, ColumnWise %v, importance %q",
						k.NewClassifier != nil, k.Load != nil, k.ColumnWise, k.Importance.Method)
				}
				return
			}
			reg, err := k.New(s, p, 2, 11)
			if err != nil {
				t.Fatal(err)
			}
			if _, ok := reg.(model.ColumnWise); ok != k.ColumnWise {
				t.Errorf("declares ColumnWise %v, its regressor %T implements model.ColumnWise: %v", k.ColumnWise, reg, ok)
			}
			if _, ok := reg.(model.Interpreter); ok != (k.Importance.Method != "") || (k.Importance.Method == "") != (k.Importance.Description == "") {
				t.Errorf("declares importance %+v, its regressor %T implements model.Interpreter: %v", k.Importance, reg, ok)
			}
			saver, ok := reg.(model.Saver)
			if k.Load != nil && !ok {
				t.Errorf("has a Load, but its regressor %T is not a model.Saver", reg)
			}
			if err := reg.Fit(context.Background(), train, valid); err != nil {
				t.Fatal(err)
			}
			pred, err := reg.Predict(test)
			if err != nil {
				t.Fatal(err)
			}
			if r, c := pred.Dims(); r != len(test) || c != 2 {
				t.Fatalf("Predict gave %d × %d, want %d × 2", r, c, len(test))
			}
			for _, v := range pred.RawMatrix().Data {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("Predict gave %v", v)
				}
			}
			// An Interpreter gives one map per declared view and target.
			if in, ok := reg.(model.Interpreter); ok {
				maps, err := in.EdgeImportance(test)
				if err != nil {
					t.Fatal(err)
				}
				if views := max(1, len(k.Views(s))); len(maps) != views*2 {
					t.Errorf("EdgeImportance gave %d maps for views %q and 2 targets", len(maps), k.Views(s))
				}
			}
			if k.Load == nil || saver == nil {
				return
			}
			dir := t.TempDir()
			if err := saver.Save(dir); err != nil {
				t.Fatal(err)
			}
			back, err := k.Load(dir)
			if err != nil {
				t.Fatal(err)
			}
			got, err := back.Predict(test)
			if err != nil {
				t.Fatal(err)
			}
			// Ridge folds its dual solution into primal weights on Save,
			// equal up to rounding.
			if !mat.EqualApprox(got, pred, 1e-9) {
				t.Errorf("predictions after Save and Load\n%v\nwant\n%v", mat.Formatted(got), mat.Formatted(pred))
			}
		})
	}
}

// TestClassifierKinds builds, fits and runs every kind with a
// NewClassifier on a tiny cohort with a binary and a three-class label (the
// class of participant i is its latent z's tercile or sign) and checks
// that its probabilities are len(test) × K rows summing to 1 and, for a
// kind with a LoadClassifier, that a saved and loaded classifier predicts
// as the fitted one (a round trip; common practice, no source), and that a
// kind declares ClassImportance exactly when its classifier is a
// model.ClassInterpreter, whose maps are then symmetric p × p, one per
// importance view and decision value.
func TestClassifierKinds(t *testing.T) {
	const n, p, nTrain, nValid = 36, 5, 24, 6
	ps, y := tinyCohort(n, p)
	settings := kindSettings()
	for _, k := range model.Kinds() {
		if k.NewClassifier == nil {
			continue
		}
		for _, classes := range []int{2, 3} {
			labels := make([]int, n)
			cuts := []float64{0}
			if classes == 3 {
				cuts = []float64{-0.45, 0.45}
			}
			for i := range labels {
				for _, c := range cuts {
					if y.At(i, 0) > c {
						labels[i]++
					}
				}
			}
			set := func(from, to int) model.LabelledSet {
				return model.LabelledSet{Participants: ps[from:to], Classes: classes, Labels: labels[from:to]}
			}
			t.Run(fmt.Sprint(k.Name, " ", classes, " classes"), func(t *testing.T) {
				s := settings[k.Name]
				s.SetDefaults()
				if err := s.Validate(); err != nil {
					t.Fatal(err)
				}
				c, err := k.NewClassifier(s, p, classes, 11)
				if err != nil {
					t.Fatal(err)
				}
				if err := c.Fit(context.Background(), set(0, nTrain), set(nTrain, nTrain+nValid)); err != nil {
					t.Fatal(err)
				}
				test := ps[nTrain+nValid:]
				proba, err := c.PredictProba(test)
				if err != nil {
					t.Fatal(err)
				}
				if r, cols := proba.Dims(); r != len(test) || cols != classes {
					t.Fatalf("PredictProba gave %d × %d, want %d × %d", r, cols, len(test), classes)
				}
				for i := range test {
					if sum := mat.Sum(proba.RowView(i)); math.Abs(sum-1) > 1e-12 {
						t.Errorf("row %d sums to %v", i, sum)
					}
				}
				in, ok := c.(model.ClassInterpreter)
				if ok != (k.ClassImportance.Method != "") || (k.ClassImportance.Method == "") != (k.ClassImportance.Description == "") {
					t.Errorf("declares class importance %+v, its classifier %T implements model.ClassInterpreter: %v", k.ClassImportance, c, ok)
				}
				if ok {
					maps, err := in.EdgeImportance(test)
					if err != nil {
						t.Fatal(err)
					}
					views := max(1, len(k.Views(s)))
					if want := views * model.ExplainedClasses(classes); len(maps) != want {
						t.Fatalf("EdgeImportance gave %d maps, want %d views × %d decision values", len(maps), views, model.ExplainedClasses(classes))
					}
					for _, m := range maps {
						if r, cols := m.Dims(); r != p || cols != p || !mat.Equal(m, m.T()) {
							t.Fatalf("an importance map is %d × %d or not symmetric, want a symmetric %d × %d", r, cols, p, p)
						}
					}
				}
				saver, ok := c.(interface{ Save(dir string) error })
				if k.LoadClassifier == nil {
					return
				}
				if !ok {
					t.Fatalf("has a LoadClassifier, but its classifier %T has no Save", c)
				}
				dir := t.TempDir()
				if err := saver.Save(dir); err != nil {
					t.Fatal(err)
				}
				back, err := k.LoadClassifier(dir)
				if err != nil {
					t.Fatal(err)
				}
				got, err := back.PredictProba(test)
				if err != nil {
					t.Fatal(err)
				}
				if !mat.EqualApprox(got, proba, 1e-9) {
					t.Errorf("probabilities after Save and LoadClassifier\n%v\nwant\n%v", mat.Formatted(got), mat.Formatted(proba))
				}
			})
		}
	}
}

// otherSettings is settings of no registered kind.
type otherSettings struct{}

func (otherSettings) SetDefaults()    {}
func (otherSettings) Validate() error { return nil }

// TestKindsRefuseOtherSettings: New of every kind returns an error, not a
// panic, for settings of another type.
func TestKindsRefuseOtherSettings(t *testing.T) {
	for _, k := range model.Kinds() {
		if k.New != nil {
			if _, err := k.New(otherSettings{}, 4, 1, 1); err == nil || !strings.Contains(err.Error(), k.Name) {
				t.Errorf("%s: New with otherSettings: error %v, want one naming the kind", k.Name, err)
			}
		}
		if k.NewClassifier != nil {
			if _, err := k.NewClassifier(otherSettings{}, 4, 2, 1); err == nil || !strings.Contains(err.Error(), k.Name) {
				t.Errorf("%s: NewClassifier with otherSettings: error %v, want one naming the kind", k.Name, err)
			}
		}
	}
}

// TestLoadRefusesOtherKind: a saved mean predictor is not read back as
// ridge.
func TestLoadRefusesOtherKind(t *testing.T) {
	ps, y := tinyCohort(10, 4)
	mean := linear.NewMean()
	if err := mean.Fit(context.Background(), part(ps, y, 0, 10), model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := mean.Save(dir); err != nil {
		t.Fatal(err)
	}
	ridge, _ := model.Lookup("ridge")
	if _, err := ridge.Load(dir); err == nil || !strings.Contains(err.Error(), "mean") {
		t.Errorf("loading a mean predictor as ridge: error %v, want one naming mean", err)
	}
}

func TestLookupUnknown(t *testing.T) {
	_, err := model.Lookup("lasso")
	if !errors.Is(err, model.ErrUnknownKind) {
		t.Fatalf("Lookup(\"lasso\"): error %v, want one wrapping ErrUnknownKind", err)
	}
	for _, want := range []string{`"lasso"`, "known kinds: cpm, kernel_logistic, kernel_ridge, logistic, majority, mean, network, ridge"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("Lookup(\"lasso\"): error %q does not contain %q", err, want)
		}
	}
}

func TestRegisterPanics(t *testing.T) {
	newMean := func(model.Settings, int, int, int64) (model.Regressor, error) { return linear.NewMean(), nil }
	tests := []struct {
		name string
		k    model.Kind
	}{
		{"taken name", model.Kind{Name: "ridge", New: newMean}},
		{"empty name", model.Kind{New: newMean}},
		{"not a bare key", model.Kind{Name: "Kernel ridge", New: newMean}},
		{"no New", model.Kind{Name: "unused_kind"}},
	}
	for _, tt := range tests {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: Register did not panic", tt.name)
				}
			}()
			model.Register(tt.k)
		}()
	}
	if _, err := model.Lookup("unused_kind"); err == nil {
		t.Error("a kind without New was registered")
	}
}
