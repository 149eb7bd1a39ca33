package synth_test

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
)

// TestLabelOracleAUC checks the integral against scipy's multivariate
// normal CDF (testdata/oracle_auc.py, an exact identity for the
// liability-threshold model; scipy's CDF is accurate to about 1e-6).
func TestLabelOracleAUC(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("testdata", "oracle_auc.json"))
	if err != nil {
		t.Fatal(err)
	}
	var rows []struct{ Rho, Prevalence, AUC float64 }
	if err := json.Unmarshal(raw, &rows); err != nil {
		t.Fatal(err)
	}
	for _, r := range rows {
		if got := synth.LabelOracleAUC(r.Rho, r.Prevalence); math.Abs(got-r.AUC) > 2e-5 {
			t.Errorf("LabelOracleAUC(%v, %v) = %.7f, scipy %.7f", r.Rho, r.Prevalence, got, r.AUC)
		}
	}
}

// mannWhitneyAUC is P(score of a positive > score of a negative), ties
// counting one half: the ROC AUC (Mann–Whitney U / (n₁ n₀), common
// practice, no source).
func mannWhitneyAUC(positive []bool, score []float64) float64 {
	var u, n1, n0 float64
	for i := range score {
		if !positive[i] {
			continue
		}
		n1++
		for j := range score {
			if positive[j] {
				continue
			}
			switch {
			case score[i] > score[j]:
				u++
			case score[i] == score[j]:
				u += 0.5
			}
		}
	}
	for _, p := range positive {
		if !p {
			n0++
		}
	}
	return u / (n1 * n0)
}

// TestAddLabel: the label leaves the rest of the cohort unchanged, has
// round(prevalence·n) patients, and its planted signal separates the
// classes with about the oracle AUC (a sample of 400: SE about 0.025), a
// null label with about 0.5.
func TestAddLabel(t *testing.T) {
	base := synth.Config{N: 400, P: 16, Seed: 5, TimePoints: 100, FamilySize: 2}
	plain := generate(t, base)
	for _, tc := range []struct {
		name  string
		label synth.Label
		auc   float64 // expected sample AUC of the signal of a non-null label
	}{
		{"planted", synth.Label{Name: "diagnosis", Prevalence: 0.25, AUC: 0.85}, 0.85},
		{"defaults", synth.Label{Name: "diagnosis"}, synth.DefaultLabelAUC},
		{"null", synth.Label{Name: "diagnosis", Null: true}, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			cfg := base
			cfg.Label = &tc.label
			c := generate(t, cfg)
			for i, p := range c.Participants {
				q := plain.Participants[i]
				if !reflect.DeepEqual(p.Scores, q.Scores) || !reflect.DeepEqual(p.Covariates, q.Covariates) ||
					!sameValues(p.Functional.RawMatrix().Data, q.Functional.RawMatrix().Data) || !sameValues(p.Structural.RawMatrix().Data, q.Structural.RawMatrix().Data) {
					t.Fatalf("participant %s differs from the cohort without a label", p.ID)
				}
			}
			if !reflect.DeepEqual(c.Labels, []string{"diagnosis"}) || !reflect.DeepEqual(c.Classes, [][]string{{"control", "patient"}}) {
				t.Fatalf("labels %q classes %q", c.Labels, c.Classes)
			}
			prevalence := tc.label.Prevalence
			if prevalence == 0 {
				prevalence = synth.DefaultPrevalence
			}
			positive := make([]bool, len(c.Participants))
			patients := 0
			for i, p := range c.Participants {
				positive[i] = p.Labels[0] == 1
				if positive[i] {
					patients++
				}
			}
			if want := int(math.Round(prevalence * 400)); patients != want {
				t.Errorf("%d patients, want %d", patients, want)
			}
			lt := c.LabelTruth
			if tc.label.Null {
				if lt.Signal != nil || lt.AUC != 0.5 || len(lt.Positive) > 0 {
					t.Errorf("null label truth %+v", lt)
				}
				// The recall signal knows nothing of a null label.
				if auc := mannWhitneyAUC(positive, c.Truth[0].Signal); math.Abs(auc-0.5) > 0.1 {
					t.Errorf("null label: AUC of an unrelated signal %.3f, want about 0.5", auc)
				}
				return
			}
			if math.Abs(lt.AUC-tc.auc) > 1e-6 {
				t.Errorf("oracle AUC %.6f, want %.6f", lt.AUC, tc.auc)
			}
			auc := mannWhitneyAUC(positive, lt.Signal)
			t.Logf("sample AUC of the planted signal %.3f, oracle %.3f, rho %.3f", auc, lt.AUC, lt.Effect)
			if math.Abs(auc-tc.auc) > 0.08 {
				t.Errorf("sample AUC of the planted signal %.3f, oracle %.3f", auc, tc.auc)
			}
		})
	}
}

func sameValues(a, b []float64) bool { return reflect.DeepEqual(a, b) }

// TestLabelConfigErrors names the Label field at fault.
func TestLabelConfigErrors(t *testing.T) {
	for _, tc := range []struct {
		label synth.Label
		want  string
	}{
		{synth.Label{Name: "recall"}, "Label.Name = recall"},
		{synth.Label{Name: "family"}, "Label.Name = family"},
		{synth.Label{Name: "dx", Prevalence: 1.2}, "Label.Prevalence = 1.2"},
		{synth.Label{Name: "dx", Prevalence: 0.01}, "at least 2 participants of each class among 20"},
		{synth.Label{Name: "dx", AUC: 0.4}, "Label.AUC = 0.4"},
	} {
		_, err := synth.Generate(synth.Config{N: 20, P: 8, Seed: 1, Label: &tc.label})
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%+v: error %v, want %q", tc.label, err, tc.want)
		}
	}
}

// TestWriteLabelLoad writes a cohort with a label and loads it back
// through its own experiment.toml: the classes and every participant's
// class survive, and planted.tsv lists the label's edges.
func TestWriteLabelLoad(t *testing.T) {
	c := generate(t, synth.Config{N: 30, P: 8, Seed: 9, Label: &synth.Label{Name: "diagnosis"}})
	dir := filepath.Join(t.TempDir(), "cohort")
	if err := synth.Write(dir, c, synth.FormatTSV); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(filepath.Join(dir, "experiment.toml"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(raw), "#   diagnosis  oracle AUC = 0.800 (patient share 0.30") {
		t.Errorf("experiment.toml lacks the oracle AUC:\n%s", raw)
	}
	var exp struct {
		Cohort     data.Source     `toml:"cohort"`
		Preprocess data.Preprocess `toml:"preprocess"`
	}
	dec := toml.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&exp); err != nil {
		t.Fatal(err)
	}
	loaded, err := data.Load(exp.Cohort, exp.Preprocess, dir)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(loaded.Classes, c.Classes) {
		t.Fatalf("classes %q, want %q", loaded.Classes, c.Classes)
	}
	for i, p := range loaded.Participants {
		if !reflect.DeepEqual(p.Labels, c.Participants[i].Labels) {
			t.Errorf("%s: labels %v, want %v", p.ID, p.Labels, c.Participants[i].Labels)
		}
	}
	planted, err := os.ReadFile(filepath.Join(dir, "planted.tsv"))
	if err != nil {
		t.Fatal(err)
	}
	if got, want := strings.Count(string(planted), "diagnosis\tfunctional\t"), len(c.LabelTruth.Positive)+len(c.LabelTruth.Negative); got != want || want == 0 {
		t.Errorf("planted.tsv has %d diagnosis edges, want %d", got, want)
	}
}
