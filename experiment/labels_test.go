package experiment

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

// TestReportWritesLabels: a run whose cohort has a class label writes
// class_predictions.csv, the label's metrics in metrics.json and a table
// and answer sentence in summary.md. The classifiers' probabilities are
// made up here (the kinds that classify live in other packages): "mean"
// gets probabilities independent of the label, whose AUC must stay near
// 0.5, "ridge" probabilities that lean towards the true class.
func TestReportWritesLabels(t *testing.T) {
	sc, err := synth.Generate(synth.Config{N: 120, P: 8, Seed: 4, Null: true, Targets: 1, TimePoints: 100})
	if err != nil {
		t.Fatal(err)
	}
	if err := sc.Preprocess(data.Preprocess{}); err != nil {
		t.Fatal(err)
	}
	c := sc.Cohort
	c.Labels, c.Classes = []string{"diagnosis"}, [][]string{{"control", "patient"}}
	rng := rand.New(rand.NewPCG(4, 4))
	for i, p := range c.Participants {
		p.Labels = []int{rng.IntN(2)}
		if i%10 == 3 {
			p.Labels[0] = -1
		}
	}
	exp := &Experiment{
		Seed: 4,
		CV:   train.CV{Folds: new(5), Repeats: new(2), Confounds: []string{"age"}},
		Models: []train.ModelConfig{
			{Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}},
			{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}},
		},
	}
	exp.SetDefaults()
	r := &train.Runner{Design: exp.Design(), Cohort: c, Jobs: 1}
	res, err := r.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	known := 0
	for _, m := range exp.Models {
		for _, s := range res.Splits {
			for _, i := range s.Test {
				p := c.Participants[i]
				if p.Labels[0] < 0 {
					continue
				}
				p1 := rng.Float64()
				if m.Name == "ridge" {
					p1 = min(0.99, max(0.01, 0.5+0.3*float64(2*p.Labels[0]-1)+0.15*rng.NormFloat64()))
				}
				res.ClassPredictions = append(res.ClassPredictions, model.ClassPrediction{ParticipantID: p.ID, Model: m.Name,
					Label: "diagnosis", Repeat: s.Repeat, Fold: s.Fold, Observed: p.Labels[0], Probabilities: []float64{1 - p1, p1}})
				known++
			}
		}
	}
	rep, err := Evaluate(context.Background(), exp, r, res, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(rep.Summary.Labels) != 2 {
		t.Fatalf("%d label groups, want 2", len(rep.Summary.Labels))
	}
	for _, g := range rep.Summary.Labels {
		iv := g.Intervals[eval.MetricAUC]
		t.Logf("%s: AUC %.3f (%.3f to %.3f), %d folds", g.Model, g.Pooled.AUC, iv.Lower, iv.Upper, len(g.Folds))
		if g.Model == "mean" && math.Abs(g.Pooled.AUC-0.5) > 0.1 {
			t.Errorf("probabilities independent of the label: AUC %.3f, want near 0.5", g.Pooled.AUC)
		}
		if g.Model == "ridge" && g.Pooled.AUC < 0.85 {
			t.Errorf("probabilities leaning to the true class: AUC %.3f, want above 0.85", g.Pooled.AUC)
		}
		if len(g.Folds) != 10 || !(iv.Lower < g.Pooled.AUC && g.Pooled.AUC < iv.Upper) {
			t.Errorf("%s: %d folds, interval %+v", g.Model, len(g.Folds), iv)
		}
	}

	rd, err := CreateRunDir(filepath.Join(t.TempDir(), "run"))
	if err != nil {
		t.Fatal(err)
	}
	defer rd.Close()
	if err := rep.Write(rd); err != nil {
		t.Fatal(err)
	}
	read := func(name string) string {
		raw, err := os.ReadFile(rd.WorkPath(name))
		if err != nil {
			t.Fatal(err)
		}
		return string(raw)
	}
	csv := strings.Split(strings.TrimSpace(read(ClassPredictionsFile)), "\n")
	if csv[0] != "participant_id,model,target,repeat,fold,observed,class,probability" || len(csv) != 1+2*known {
		t.Errorf("class_predictions.csv: header %q and %d rows, want %d", csv[0], len(csv)-1, 2*known)
	}
	var metrics struct {
		Labels []struct {
			Model  string             `json:"model"`
			Label  string             `json:"label"`
			Pooled map[string]float64 `json:"pooled"`
		} `json:"labels"`
	}
	if err := json.Unmarshal([]byte(read(MetricsFile)), &metrics); err != nil {
		t.Fatal(err)
	}
	if len(metrics.Labels) != 2 || metrics.Labels[1].Pooled["auc"] != rep.Summary.Labels[1].Pooled.AUC {
		t.Errorf("metrics.json labels: %+v", metrics.Labels)
	}
	md := read(SummaryFile)
	for _, want := range []string{"predicts diagnosis with AUC", "### diagnosis (class label)", "(not out of the class labels)", eval.Disclaimer} {
		if !strings.Contains(md, want) {
			t.Errorf("summary.md lacks %q", want)
		}
	}
}
