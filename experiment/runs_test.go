package experiment

import (
	"bytes"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/internal/figure"
)

// fakeRun holds one pooled Pearson r and MAE per model × target ("ridge",
// "recall"...) and, when p is not nil, the permutation p of Pearson r.
func fakeRun(dir string, r, mae map[string]float64, p map[string]float64) *Folder {
	run := &Folder{Dir: dir, Summary: &eval.Summary{}, Scored: map[[2]string]int{}}
	var keys []string
	for k := range r {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	for _, k := range keys {
		model, target, _ := strings.Cut(k, "/")
		g := eval.Group{Model: model, Target: target}
		g.Pooled.Values = eval.Values{PearsonWithin: r[k], Pearson: r[k], MAE: mae[k], Spearman: math.NaN(), MedianAE: math.NaN(), RMSE: math.NaN(), R2: math.NaN(), NMI: math.NaN()}
		g.Pooled.N = 50
		run.Summary.Groups = append(run.Summary.Groups, g)
		run.Scored[[2]string{model, target}] = 50
		if p != nil {
			if run.P == nil {
				run.P = map[[2]string]eval.Values{}
			}
			run.P[[2]string{model, target}] = eval.Values{PearsonWithin: p[k], Pearson: p[k]}
		}
	}
	return run
}

func TestCheckDrift(t *testing.T) {
	before := fakeRun("night1",
		map[string]float64{"ridge/recall": 0.40, "ridge/fluency": 0.30, "mean/recall": 0},
		map[string]float64{"ridge/recall": 5.0, "ridge/fluency": 4.0, "mean/recall": 6},
		map[string]float64{"ridge/recall": 0.01, "ridge/fluency": 0.04, "mean/recall": 0.5})
	after := fakeRun("night2",
		map[string]float64{"ridge/recall": 0.35, "ridge/fluency": 0.05, "mean/recall": -0.5, "ridge/new": 0.1},
		map[string]float64{"ridge/recall": 5.6, "ridge/fluency": 4.1, "mean/recall": 9, "ridge/new": 1},
		map[string]float64{"ridge/recall": 0.02, "ridge/fluency": 0.2, "mean/recall": 0.9, "ridge/new": 0.5})
	rule := Drift{Worsen: map[string]float64{"pearson_r": 0.1, "mae": 0.5}, PLevel: 0.05, Models: []string{"ridge"}}
	rule.SetDefaults()
	rep := CheckDrift(rule, before, after)
	var got []string
	for _, b := range rep.Breaks {
		got = append(got, b.Model+"/"+b.Target+" "+b.Rule)
	}
	// By hand: recall r fell 0.05 (kept), MAE rose 0.6 (> 0.5, broken);
	// fluency r fell 0.25 (broken), p 0.04 → 0.2 crosses 0.05 (broken);
	// mean is not checked; ridge/new is not in the earlier run.
	want := []string{"ridge/fluency drift.worsen.pearson_r", "ridge/fluency drift.p_level", "ridge/recall drift.worsen.mae"}
	if !slices.Equal(got, want) {
		t.Errorf("breaks %v, want %v", got, want)
	}
	if len(rep.Unchecked) != 1 || !strings.Contains(rep.Unchecked[0], `"new"`) {
		t.Errorf("unchecked %q, want the target missing from the earlier run", rep.Unchecked)
	}
	msg := rep.Breaks[0].String()
	for _, part := range []string{`model "ridge"`, `target "fluency"`, "pearson_r fell from 0.3 to 0.05", "drift.worsen.pearson_r = 0.1"} {
		if !strings.Contains(msg, part) {
			t.Errorf("message %q lacks %q", msg, part)
		}
	}
	if msg := rep.Breaks[2].String(); !strings.Contains(msg, "mae rose from 5 to 5.6") {
		t.Errorf("message %q", msg)
	}

	if rep := CheckDrift(rule, before, before); len(rep.Breaks) != 0 || len(rep.Unchecked) != 0 {
		t.Errorf("a run against itself: %+v", rep)
	}
	noPerm := fakeRun("night3", map[string]float64{"ridge/recall": 0.4}, map[string]float64{"ridge/recall": 5}, nil)
	if rep := CheckDrift(rule, before, noPerm); len(rep.Breaks) != 0 || len(rep.Unchecked) != 2 {
		t.Errorf("without a permutation test: %+v; want p_level and the missing fluency listed as unchecked", rep)
	}
}

// TestReadPValues: p = (1 + #{null ≥ observed}) / (1 + N) (Phipson & Smyth
// 2010), worked by hand: observed r 0.5 against 0.1, 0.6, 0.2, 0.3 gives
// 2/5; observed MAE 2 against 3, 1, 4, 5 (lower is better) gives 2/5.
func TestReadPValues(t *testing.T) {
	csv := "model,target,permutation,pearson_r_within,pearson_r,spearman_rho,mae,median_ae,rmse,r2,nmi,ami\n" +
		"ridge,recall,0,0.5,0.5,0.5,2,2,2,0.1,0.2,0.1\n" +
		"ridge,recall,1,0.1,0.1,0.1,3,3,3,0,0.1,0\n" +
		"ridge,recall,2,0.6,0.6,0.6,1,1,1,0,0.1,0\n" +
		"ridge,recall,3,0.2,0.2,0.2,4,4,4,0,0.1,0\n" +
		"ridge,recall,4,0.3,0.3,0.3,5,5,5,0,NaN,NaN\n"
	p, err := readPValues(strings.NewReader(csv), "permutations.csv")
	if err != nil {
		t.Fatal(err)
	}
	v := p[[2]string{"ridge", "recall"}]
	if v.PearsonWithin != 0.4 || v.Pearson != 0.4 || v.MAE != 0.4 {
		t.Errorf("p of r %v, of MAE %v; want 0.4 and 0.4", v.Pearson, v.MAE)
	}
	// A run of an older skein has no pearson_r_within or ami column: their
	// p-values are NaN, the others are read.
	older := "model,target,permutation,pearson_r,mae\nridge,recall,0,0.5,2\nridge,recall,1,0.6,1\n"
	p, err = readPValues(strings.NewReader(older), "permutations.csv")
	if v := p[[2]string{"ridge", "recall"}]; err != nil || !math.IsNaN(v.PearsonWithin) || !math.IsNaN(v.AMI) || v.Pearson != 1 || v.MAE != 1 {
		t.Errorf("older permutations.csv: %+v, %v", v, err)
	}
	_, err = readPValues(strings.NewReader(strings.Replace(csv, "0.6,0.6,0.6", "0.6,high,0.6", 1)), "permutations.csv")
	if err == nil || !strings.Contains(err.Error(), `permutations.csv: line 4, column 5 ("pearson_r")`) {
		t.Errorf("bad cell: %v", err)
	}
}

func TestFlattenKeysNamedTables(t *testing.T) {
	parse := func(s string) map[string]string {
		var m map[string]any
		if err := toml.Unmarshal([]byte(s), &m); err != nil {
			t.Fatal(err)
		}
		out := make(map[string]string)
		flatten("", m, out)
		return out
	}
	got := parse(`seed = 3
[cv]
folds = 5
confounds = ["age", "sex"]
[[model]]
name = "ridge"
[model.ridge]
alpha = 1.5
[[model]]
name = "net"
[[model.network.branch]]
layers = [{kind = "e2e", channels = 8}]
`)
	want := map[string]string{
		"seed": "3", "cv.folds": "5", "cv.confounds": `["age", "sex"]`,
		`model["ridge"].ridge.alpha`:                        "1.5",
		`model["net"].network.branch[0].layers[0].kind`:     `"e2e"`,
		`model["net"].network.branch[0].layers[0].channels`: "8",
	}
	for k, v := range want {
		if got[k] != v {
			t.Errorf("%s = %q, want %q", k, got[k], v)
		}
	}
	if len(got) != len(want) {
		t.Errorf("keys %v, want %d", got, len(want))
	}
}

func TestHistoryAppendReadPlot(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, HistoryFile)
	start := time.Date(2026, 3, 1, 2, 0, 0, 0, time.UTC)
	for night := 0; night < 7; night++ {
		run := fakeRun(filepath.Join(dir, "night"),
			map[string]float64{"ridge/recall": 0.3 + 0.02*float64(night), "mean/recall": math.NaN()},
			map[string]float64{"ridge/recall": 5, "mean/recall": 6}, nil)
		if err := UpdateHistory(path, "/lab/memory.toml", run, start.AddDate(0, 0, night)); err != nil {
			t.Fatal(err)
		}
	}
	rows, err := ReadHistoryFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 14 || !rows[13].Date.Equal(start.AddDate(0, 0, 6)) || rows[13].Model != "ridge" || rows[13].Experiment != "/lab/memory.toml" ||
		math.Abs(rows[13].RWithinFolds-0.42) > 1e-12 || !math.IsNaN(rows[12].RWithinFolds) || !math.IsNaN(rows[13].PermutationP) || rows[13].N != 50 {
		t.Fatalf("history read back: %d rows, last %+v", len(rows), rows[len(rows)-1])
	}
	png, err := os.ReadFile(HistoryPlotPath(path))
	if err != nil || !bytes.HasPrefix(png, []byte("\x89PNG")) {
		t.Fatalf("history plot: %v", err)
	}
	svg, err := os.ReadFile(strings.TrimSuffix(HistoryPlotPath(path), ".png") + ".svg")
	if err != nil || !bytes.Contains(svg, []byte("<svg")) {
		t.Fatalf("history plot as SVG: %v", err)
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 3 {
		t.Errorf("folder holds %d entries, want history.csv, history.png and history.svg (no temporary files left)", len(entries))
	}

	os.WriteFile(path, []byte("when,what\n"), 0o644)
	if err := AppendHistory(path, nil); err == nil || !strings.Contains(err.Error(), "history.csv: line 1: want the header") {
		t.Errorf("foreign file: %v", err)
	}
	bad := "date,experiment,run,model,target,r_within_folds,mae,permutation_p,n\n2026-03-01,/e.toml,n1,ridge,recall,0.3,5,,50\n"
	if _, err := ReadHistory(strings.NewReader(bad), "h.csv"); err == nil || !strings.Contains(err.Error(), `h.csv: line 2, column 1 ("date")`) {
		t.Errorf("bad date: %v", err)
	}
	older := "date,run,model,target,pearson_r,mae,permutation_p,n\n"
	if _, err := ReadHistory(strings.NewReader(older), "h.csv"); err == nil || !strings.Contains(err.Error(), "move it aside") {
		t.Errorf("history of an older skein: %v", err)
	}
}

// TestHistoryPerExperiment: each experiment file has its own default
// history beside it; a history shared by two experiments keeps their
// rows apart by experiment; a history written before the experiment
// column is read (experiment empty) and rewritten with the column.
func TestHistoryPerExperiment(t *testing.T) {
	for _, tc := range []struct {
		path, want string
	}{
		{"/lab/memory/experiment.toml", "/lab/memory/experiment.history.csv"},
		{"cohort/demo.toml", "cohort/demo.history.csv"},
		{"fluency.v2.toml", "fluency.v2.history.csv"},
	} {
		if got := DefaultHistory(tc.path); got != tc.want {
			t.Errorf("DefaultHistory(%q) = %q, want %q", tc.path, got, tc.want)
		}
	}
	dir := t.TempDir()
	path := filepath.Join(dir, "shared.csv")
	legacy := "date,run,model,target,r_within_folds,mae,permutation_p,n\n2026-02-01T02:00:00Z,old,ridge,recall,0.25,5,,40\n"
	if err := os.WriteFile(path, []byte(legacy), 0o644); err != nil {
		t.Fatal(err)
	}
	start := time.Date(2026, 3, 1, 2, 0, 0, 0, time.UTC)
	for i, exp := range []string{"/lab/a.toml", "/lab/b.toml", "/lab/a.toml"} {
		run := fakeRun(filepath.Join(dir, "night"), map[string]float64{"ridge/recall": 0.3}, map[string]float64{"ridge/recall": 5}, nil)
		if err := UpdateHistory(path, exp, run, start.AddDate(0, 0, i)); err != nil {
			t.Fatal(err)
		}
	}
	raw, _ := os.ReadFile(path)
	want := "date,experiment,run,model,target,r_within_folds,mae,permutation_p,n\n" +
		"2026-02-01T02:00:00Z,,old,ridge,recall,0.25,5,,40\n" +
		"2026-03-01T02:00:00Z,/lab/a.toml,night,ridge,recall,0.3,5,,50\n" +
		"2026-03-02T02:00:00Z,/lab/b.toml,night,ridge,recall,0.3,5,,50\n" +
		"2026-03-03T02:00:00Z,/lab/a.toml,night,ridge,recall,0.3,5,,50\n"
	if string(raw) != want {
		t.Errorf("history file\n%s\nwant\n%s", raw, want)
	}
	rows, err := ReadHistoryFile(path)
	if err != nil {
		t.Fatal(err)
	}
	_, series, labels := historyLines(rows)
	wantLabels := []string{"(experiment not recorded) · ridge · recall", "a · ridge · recall", "b · ridge · recall"}
	if !slices.Equal(labels, wantLabels) {
		t.Errorf("plot lines %q, want %q", labels, wantLabels)
	}
	for _, tc := range []struct {
		experiment string
		points     int
	}{{"", 1}, {"/lab/a.toml", 2}, {"/lab/b.toml", 1}} {
		if got := len(series[historyKey{tc.experiment, "ridge", "recall"}]); got != tc.points {
			t.Errorf("line of %q has %d points, want %d", tc.experiment, got, tc.points)
		}
	}
}

func TestPlotSampleSize(t *testing.T) {
	var rows []eval.SampleSizeRow
	for _, f := range []float64{0.25, 0.5, 1} {
		for fold := 0; fold < 3; fold++ {
			rows = append(rows, eval.SampleSizeRow{Model: "ridge", Target: "recall", Fraction: f, NTrain: int(40 * f), Fold: fold,
				Pearson: 0.2 + 0.3*f + 0.02*float64(fold), MAE: 5 - f})
		}
	}
	var buf, svg bytes.Buffer
	if err := PlotSampleSize(&buf, &svg, rows); err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatalf("not a PNG: %v", err)
	}
	// Two journal columns wide (7 in) at figure.DPI.
	if b := img.Bounds(); b.Dx() != figure.DoubleColumn*figure.DPI || b.Dy() != plotHeight*figure.DPI {
		t.Errorf("PNG of %d × %d pixels", b.Dx(), b.Dy())
	}
	if !bytes.Contains(svg.Bytes(), []byte(`<svg width="504pt"`)) || !bytes.Contains(svg.Bytes(), []byte("Liberation Sans")) {
		t.Error("the SVG is not 7 in wide in the report's font")
	}
	if err := PlotSampleSize(&buf, nil, nil); err == nil {
		t.Error("no rows: want an error")
	}
}
