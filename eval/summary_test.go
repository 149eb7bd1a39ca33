package eval

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func readFixturePredictions(t *testing.T) []Prediction {
	t.Helper()
	path := filepath.Join("..", "testdata", "eval", "predictions.csv")
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	rows, _, err := ReadPredictions(fh, path)
	if err != nil {
		t.Fatal(err)
	}
	return rows
}

// Pooled and per-fold figures, NMI's chance level, and the mean and SD
// (numpy.std, ddof=1) of the figures against the fixture script's
// scipy/scikit-learn values for the invented run in predictions.csv
// (make_fixtures.py, predictions). Folds of memory have 8 distinct values
// a side, each in a bin of its own: their AMI is 0 by skein's convention
// (make_fixtures.py, ami_reference).
func TestSummarizeAgainstFixture(t *testing.T) {
	want := loadFixtures(t).PredictionsSummary
	got := Summarize(readFixturePredictions(t), 0, true)
	if got.Bins != DefaultBins || len(got.Groups) != len(want) {
		t.Fatalf("bins %d, %d groups; want %d, %d", got.Bins, len(got.Groups), DefaultBins, len(want))
	}
	for i, w := range want {
		g := got.Groups[i]
		name := w.Model + "/" + w.Target
		if g.Model != w.Model || g.Target != w.Target {
			t.Fatalf("group %d is %s/%s, want %s", i, g.Model, g.Target, name)
		}
		if g.Pooled.N != w.Pooled.N || g.Pooled.Missing != w.Pooled.Missing {
			t.Errorf("%s pooled: N, Missing = %d, %d; want %d, %d", name, g.Pooled.N, g.Pooled.Missing, w.Pooled.N, w.Pooled.Missing)
		}
		checkValues(t, name+" pooled", g.Pooled.Values, w.Pooled.values(), 1e-10)
		if !near(g.Pooled.NMIChance, float64(w.Pooled.NMIChance), 1e-12) {
			t.Errorf("%s pooled: NMIChance = %.17g, want %.17g", name, g.Pooled.NMIChance, float64(w.Pooled.NMIChance))
		}
		if len(g.Folds) != len(w.Folds) {
			t.Fatalf("%s: %d folds, want %d", name, len(g.Folds), len(w.Folds))
		}
		for j, wf := range w.Folds {
			f := g.Folds[j]
			// The fixture numbers repeats and folds from 1, as files do.
			if f.Repeat+1 != wf.Repeat || f.Fold+1 != wf.Fold || f.N != wf.N {
				t.Errorf("%s fold %d: repeat, fold, N = %d, %d, %d; want %d, %d, %d", name, j, f.Repeat, f.Fold, f.N, wf.Repeat, wf.Fold, wf.N)
			}
			checkValues(t, name+" fold", f.Values, wf.values(), 1e-10)
			if !near(f.NMIChance, float64(wf.NMIChance), 1e-12) {
				t.Errorf("%s fold %d: NMIChance = %.17g, want %.17g", name, j, f.NMIChance, float64(wf.NMIChance))
			}
		}
		checkValues(t, name+" fold mean", g.FoldMean, w.FoldMean.values(), 1e-10)
		checkValues(t, name+" fold SD", g.FoldSD, w.FoldSD.values(), 1e-10)
		if len(g.FoldUndefined) != 0 {
			t.Errorf("%s: undefined folds %v", name, g.FoldUndefined)
		}
	}
}

func TestSummarizeWithoutFolds(t *testing.T) {
	rows := []Prediction{{Observed: 1, Predicted: 2}, {Observed: 2, Predicted: 2}, {Observed: 3, Predicted: 5}}
	s := Summarize(rows, 2, false)
	if len(s.Groups) != 1 || len(s.Groups[0].Folds) != 0 || s.Groups[0].Pooled.N != 3 {
		t.Fatalf("summary %+v", s)
	}
	if g := s.Groups[0]; !math.IsNaN(g.FoldMean.MAE) || !math.IsNaN(g.FoldSD.MAE) || g.Pooled.MAE != 1 {
		t.Errorf("group %+v", g)
	}
}

// A fold where a metric is undefined is left out of the mean and counted.
func TestSummarizeUndefinedFold(t *testing.T) {
	rows := []Prediction{
		{Fold: 0, Observed: 1, Predicted: 5}, {Fold: 0, Observed: 2, Predicted: 5}, // constant prediction: r undefined
		{Fold: 1, Observed: 1, Predicted: 1}, {Fold: 1, Observed: 2, Predicted: 3},
		{Fold: 2, Observed: 1, Predicted: 2}, {Fold: 2, Observed: 2, Predicted: 1},
	}
	g := Summarize(rows, 2, true).Groups[0]
	if g.FoldUndefined[MetricPearsonWithin] != 1 || g.FoldUndefined[MetricPearson] != 1 || g.FoldUndefined[MetricSpearman] != 1 ||
		len(g.FoldUndefined) != 3 {
		t.Errorf("undefined %v, want pearson_r_within: 1, pearson_r: 1, spearman_rho: 1", g.FoldUndefined)
	}
	if g.FoldMean.Pearson != 0 || g.FoldSD.Pearson != math.Sqrt2 {
		t.Errorf("r mean, SD = %v, %v; want 0, √2", g.FoldMean.Pearson, g.FoldSD.Pearson)
	}
}

func TestSummaryJSONRoundTrip(t *testing.T) {
	rows := readFixturePredictions(t)
	// A fold with one pair makes r NaN, which JSON writes as null.
	rows = append(rows, Prediction{ParticipantID: "sub-99", Model: "ridge", Target: "memory", Repeat: 5, Observed: 1, Predicted: 2})
	s := Summarize(rows, 4, true)
	var buf bytes.Buffer
	if err := s.WriteJSON(&buf); err != nil {
		t.Fatal(err)
	}
	if !json.Valid(buf.Bytes()) || !strings.Contains(buf.String(), `"pearson_r": null`) || !strings.Contains(buf.String(), "not a diagnostic device") {
		t.Fatalf("metrics.json lacks null for NaN or the disclaimer:\n%.400s", buf.String())
	}
	var back Summary
	if err := json.Unmarshal(buf.Bytes(), &back); err != nil {
		t.Fatal(err)
	}
	var again bytes.Buffer
	if err := back.WriteJSON(&again); err != nil {
		t.Fatal(err)
	}
	if again.String() != buf.String() {
		t.Error("JSON changes after a round trip")
	}
	g := back.Group("ridge", "memory")
	if g == nil || g.Pooled.N != s.Group("ridge", "memory").Pooled.N || !math.IsNaN(g.Folds[len(g.Folds)-1].Pearson) {
		t.Errorf("round trip lost values: %+v", g)
	}
	// Unknown metric names are errors, not dropped.
	var v Values
	if err := json.Unmarshal([]byte(`{"accuracy": 1}`), &v); err == nil {
		t.Error("unknown key accepted")
	}
}

func TestWriteMarkdown(t *testing.T) {
	var buf bytes.Buffer
	if err := Summarize(readFixturePredictions(t), 0, true).WriteMarkdown(&buf); err != nil {
		t.Fatal(err)
	}
	md := buf.String()
	for _, want := range []string{
		"### anxiety\n\n| model | n | folds | r within folds | Pearson r | Spearman ρ | MAE | median AE | RMSE | R² | NMI | NMI by chance | AMI |\n",
		"| graphnet | 48 | 6 |",
		"| ridge | 47 | 6 |",
		"folds have fewer than 20 pairs",
		"not a diagnostic device",
		"ethics approval, data-use agreements and clinical judgement",
		"mean ± SD over test folds",
	} {
		if !strings.Contains(md, want) {
			t.Errorf("summary.md lacks %q:\n%s", want, md)
		}
	}
	if strings.Index(md, "### anxiety") > strings.Index(md, "### memory") {
		t.Error("targets not in order")
	}
}

// The exact layout of metrics.json, documented on Summary, for a tiny run
// whose figures are worked by hand: fold 0 pairs (1, 2), (3, 3); fold 1
// pairs (2, 2), (4, 3). Pooled r = ρ = 2/√5 by hand (scipy.stats.pearsonr
// gives 0.894427190999916, one unit in the last place away), R² = 0.6.
// With 2 bins both sides pool as {1, 2} | {3, 4}, so NMI = AMI = 1; by hand
// each of the four cells has nᵢⱼ = 2 with probability 1/6 under random
// pairing, E[I] = 4 · (1/6)(2/4) ln 2 = ln(2)/3 and the chance level of NMI
// is E[I]/ln 2 = 1/3 (scikit-learn's expected_mutual_information gives
// 0.3333333333333331 for it). Each fold is two
// pairs in bins of their own: NMI 1, chance level 1, AMI 0 by skein's
// convention.
func TestSummaryJSONLayout(t *testing.T) {
	rows := []Prediction{
		{ParticipantID: "a", Model: "m", Target: "t", Fold: 0, Observed: 1, Predicted: 2},
		{ParticipantID: "b", Model: "m", Target: "t", Fold: 0, Observed: 3, Predicted: 3},
		{ParticipantID: "c", Model: "m", Target: "t", Fold: 1, Observed: 2, Predicted: 2},
		{ParticipantID: "d", Model: "m", Target: "t", Fold: 1, Observed: 4, Predicted: 3},
	}
	s := Summarize(rows, 2, true)
	if got := s.Groups[0].Pooled.NMIChance; !near(got, 1.0/3, 1e-15) {
		t.Errorf("pooled NMIChance = %.17g, want 1/3", got)
	}
	b, err := json.Marshal(s)
	if err != nil {
		t.Fatal(err)
	}
	want := `{"note":` + strconvQuote(Disclaimer) + `,"bins":2,"groups":[{"model":"m","target":"t",` +
		`"pooled":{"n":4,"missing":0,"bins":2,"pearson_r_within":1,"pearson_r":0.8944271909999159,"spearman_rho":0.8944271909999159,"mae":0.5,"median_ae":0.5,"rmse":0.7071067811865476,"r2":0.6,"nmi":1,"ami":1,"nmi_chance":0.3333333333333333},` +
		`"folds":[{"repeat":1,"fold":1,"n":2,"missing":0,"bins":2,"pearson_r_within":1,"pearson_r":1,"spearman_rho":1,"mae":0.5,"median_ae":0.5,"rmse":0.7071067811865476,"r2":0.5,"nmi":1,"ami":0,"nmi_chance":1},` +
		`{"repeat":1,"fold":2,"n":2,"missing":0,"bins":2,"pearson_r_within":1,"pearson_r":1,"spearman_rho":1,"mae":0.5,"median_ae":0.5,"rmse":0.7071067811865476,"r2":0.5,"nmi":1,"ami":0,"nmi_chance":1}],` +
		`"fold_mean":{"pearson_r_within":1,"pearson_r":1,"spearman_rho":1,"mae":0.5,"median_ae":0.5,"rmse":0.7071067811865476,"r2":0.5,"nmi":1,"ami":0},` +
		`"fold_sd":{"pearson_r_within":0,"pearson_r":0,"spearman_rho":0,"mae":0,"median_ae":0,"rmse":0,"r2":0,"nmi":0,"ami":0}}]}`
	if string(b) != want {
		t.Errorf("metrics.json\n got %s\nwant %s", b, want)
	}
}

func strconvQuote(s string) string {
	b, _ := json.Marshal(s)
	return string(b)
}

// TestWriteMarkdownKeepsGroupOrder: the tables follow the order of the
// summary's groups (the experiment's, for a run), not the alphabet, so
// that every table of a report lists scores and models alike.
func TestWriteMarkdownKeepsGroupOrder(t *testing.T) {
	s := &Summary{Groups: []Group{{Model: "net", Target: "recall"}, {Model: "net", Target: "fluency"}, {Model: "mean", Target: "recall"}}}
	var b strings.Builder
	if err := s.WriteMarkdown(&b); err != nil {
		t.Fatal(err)
	}
	md := b.String()
	recall, fluency := strings.Index(md, "### recall"), strings.Index(md, "### fluency")
	net, mean := strings.Index(md, "| net |"), strings.Index(md, "| mean |")
	if recall < 0 || fluency < recall || net < 0 || mean < net || mean > fluency {
		t.Errorf("tables out of the groups' order:\n%s", md)
	}
}

func TestUndefinedNoteInWords(t *testing.T) {
	for _, tc := range []struct {
		in   map[Metric]int
		want string
	}{
		{nil, ""},
		{map[Metric]int{MetricPearson: 2}, "undefined " + MetricPearson.Label() + " in 2 folds (left out of the mean ± SD over folds)"},
		{map[Metric]int{MetricPearson: 1, MetricNMI: 3}, "undefined " + MetricPearson.Label() + " in 1 fold, " + MetricNMI.Label() + " in 3 folds (left out of the mean ± SD over folds)"},
	} {
		got := undefinedNote(tc.in)
		if got != tc.want {
			t.Errorf("undefinedNote(%v) = %q, want %q", tc.in, got, tc.want)
		}
		if strings.Contains(got, "map[") {
			t.Errorf("undefinedNote(%v) shows a Go map: %q", tc.in, got)
		}
	}
}
