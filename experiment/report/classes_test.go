package report

import (
	"fmt"
	"image/png"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/internal/figure"
)

// classRun copies the tiny run and adds a hand-made class_predictions.csv
// for its participants: a binary label "diagnosis" (control, patient;
// every third participant a patient, the second participant's label
// missing) predicted over two identical repeats by ridge (perfectly
// separated), net (0.5 for everyone) and majority (0.3 for everyone; a
// model the experiment does not list), and a label "subtype" of three
// classes predicted by ridge in one repeat, wrongly (the next class) for
// every fourth participant. It returns the folder and the expected
// confusion counts, counted here by hand.
func classRun(t *testing.T) (dir string, want map[string][][]int) {
	t.Helper()
	src, _ := buildTiny(t)
	dir = filepath.Join(t.TempDir(), "run")
	if err := os.CopyFS(dir, os.DirFS(src)); err != nil {
		t.Fatal(err)
	}
	r, err := ReadRun(dir)
	if err != nil {
		t.Fatal(err)
	}
	var ids []string
	for _, row := range r.Rows {
		if !slices.Contains(ids, row.ParticipantID) {
			ids = append(ids, row.ParticipantID)
		}
	}
	want = map[string][][]int{
		"ridge diagnosis": {{0, 0}, {0, 0}}, "net diagnosis": {{0, 0}, {0, 0}},
		"majority diagnosis": {{0, 0}, {0, 0}}, "ridge subtype": {{0, 0, 0}, {0, 0, 0}, {0, 0, 0}},
	}
	var b strings.Builder
	b.WriteString("participant_id,model,target,repeat,fold,observed,class,probability\n")
	dx := []string{"control", "patient"}
	for _, model := range []string{"ridge", "net", "majority"} {
		for repeat := 1; repeat <= 2; repeat++ {
			for i, id := range ids {
				y := 0
				if i%3 == 0 {
					y = 1
				}
				observed := dx[y]
				if i == 1 {
					observed = ""
				}
				p := map[string]float64{"ridge": 0.2 + 0.6*float64(y) + 0.01*float64(i%5), "net": 0.5, "majority": 0.3}[model]
				fmt.Fprintf(&b, "%s,%s,diagnosis,%d,%d,%s,control,%g\n", id, model, repeat, i%3+1, observed, 1-p)
				fmt.Fprintf(&b, "%s,%s,diagnosis,%d,%d,%s,patient,%g\n", id, model, repeat, i%3+1, observed, p)
				if observed == "" {
					continue
				}
				predicted := map[string]int{"ridge": y, "net": 1, "majority": 0}[model]
				want[model+" diagnosis"][y][predicted]++
			}
		}
	}
	sub := []string{"a", "b", "c"}
	for i, id := range ids {
		y := i % 3
		predicted := y
		if i%4 == 0 {
			predicted = (y + 1) % 3
		}
		for k, class := range sub {
			p := 0.2
			if k == predicted {
				p = 0.6
			}
			fmt.Fprintf(&b, "%s,ridge,subtype,1,%d,%s,%s,%g\n", id, i%3+1, sub[y], class, p)
		}
		want["ridge subtype"][y][predicted]++
	}
	if err := os.WriteFile(filepath.Join(dir, classPredictionsFile), []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir, want
}

// TestReportOfLabels: a run with class predictions gets, for each label,
// a section with its ROC curves, calibration plot and confusion matrices,
// between the score predictions and the learning curves; a run without
// them gets none.
func TestReportOfLabels(t *testing.T) {
	dir, want := classRun(t)
	figs, err := Build(dir)
	if err != nil {
		t.Fatal(err)
	}
	// A binary label draws one panel, one column wide; three classes draw
	// three, two columns wide (common practice, no source).
	sizes := map[string][2]float64{
		"roc-diagnosis.png": {figure.SingleColumn, 3.6}, "calibration-diagnosis.png": {figure.SingleColumn, 3.6},
		"roc-subtype.png": {figure.DoubleColumn, 3.2}, "calibration-subtype.png": {figure.DoubleColumn, 3.2},
	}
	for name, size := range sizes {
		i := slices.IndexFunc(figs, func(f Figure) bool { return f.File == name })
		if i < 0 {
			t.Errorf("no figure %s; drew %v", name, names(figs))
			continue
		}
		f := figs[i]
		raw, err := os.ReadFile(filepath.Join(dir, experiment.FiguresDir, f.File))
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(strings.NewReader(string(raw)))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if b := img.Bounds(); b.Dx() != int(size[0]*DPI) || b.Dy() != int(size[1]*DPI) {
			t.Errorf("%s: %d × %d pixels, want %v × %v in", name, b.Dx(), b.Dy(), size[0], size[1])
		}
		if colours, ink := inkStats(img); colours < 3 || ink < 0.02 || ink > 0.95 {
			t.Errorf("%s: %d colours, %.1f%% ink: blank or flooded", name, colours, 100*ink)
		}
		checkSVG(t, filepath.Join(dir, experiment.FiguresDir, f.SVGFile()), size[0], size[1])
		if f.Section != SectionLabel(strings.TrimSuffix(strings.SplitN(name, "-", 2)[1], ".png")) {
			t.Errorf("%s is in section %q", name, f.Section)
		}
	}
	// The keys give each model's pooled AUC: ridge separates the classes (1),
	// a constant probability ranks every pair as a tie (0.5).
	svg, err := os.ReadFile(filepath.Join(dir, experiment.FiguresDir, "roc-diagnosis.svg"))
	if err != nil {
		t.Fatal(err)
	}
	for _, key := range []string{"ridge: pooled AUC 1<", "net: pooled AUC 0.5<", "majority: pooled AUC 0.5<", "chance (AUC 0.5)"} {
		if !strings.Contains(string(svg), key) {
			t.Errorf("roc-diagnosis.svg has no key %q", key)
		}
	}

	raw, err := os.ReadFile(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	page := string(raw)
	order := []string{"<h2>Observed and predicted scores</h2>", "<h2>Classification of diagnosis</h2>", "roc-diagnosis.svg",
		"calibration-diagnosis.svg", "<h3>ridge — confusion matrix</h3>", "<h3>net — confusion matrix</h3>",
		"<h3>majority — confusion matrix</h3>", "<h2>Classification of subtype</h2>", "roc-subtype.svg",
		"<h3>ridge — confusion matrix</h3>", "<h2>Learning curves</h2>", "not a diagnostic device"}
	rest := page
	for _, w := range order {
		_, after, ok := strings.Cut(rest, w)
		if !ok {
			t.Fatalf("report.html: %q missing or out of order (want %v)", w, order)
		}
		rest = after
	}
	for _, w := range []string{"Label predicted: diagnosis, classes control, patient (patient positive; predicted when its probability is at least 0.5).",
		"Label predicted: subtype, classes a, b, c."} {
		if !strings.Contains(page, w) {
			t.Errorf("report.html's summary lacks %q", w)
		}
	}
	// Each table's rows, counted by hand in classRun.
	for _, unit := range []struct {
		name    string
		classes []string
	}{{"ridge diagnosis", []string{"control", "patient"}}, {"net diagnosis", []string{"control", "patient"}},
		{"majority diagnosis", []string{"control", "patient"}}, {"ridge subtype", []string{"a", "b", "c"}}} {
		counts := want[unit.name]
		for k, row := range counts {
			var n int
			for _, c := range row {
				n += c
			}
			var cells strings.Builder
			for j, c := range row {
				class := "num"
				if j == k {
					class = "num diag"
				}
				fmt.Fprintf(&cells, `<td class="%s">%d (%.0f%%)</td>`, class, c, 100*float64(c)/float64(n))
			}
			tr := fmt.Sprintf(`<tr><th>%s</th>%s<td class="num">%d</td></tr>`, unit.classes[k], cells.String(), n)
			if !strings.Contains(page, tr) {
				t.Errorf("%s: report.html lacks the row %s", unit.name, tr)
			}
		}
	}
	if !strings.Contains(page, "Sensitivity (patient found) 1, specificity (control found) 1.") {
		t.Error("ridge's diagnosis table does not give sensitivity and specificity 1")
	}

	plain, err := os.ReadFile(filepath.Join(builtRun.dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(string(plain), "Classification of") || strings.Contains(string(plain), "Label predicted") {
		t.Error("the report of a run without labels has a classification section")
	}
}

func TestReadClassPredictionsErrors(t *testing.T) {
	const head = "participant_id,model,target,repeat,fold,observed,class,probability\n"
	tests := []struct {
		name, body, want string
	}{
		{"other classes", "s1,m,dx,1,1,no,no,0.4\ns1,m,dx,1,1,no,yes,0.6\ns2,m,dx,1,1,no,yes,0.6\ns2,m,dx,1,1,no,no,0.4\n",
			`class_predictions.csv: line 4: participant "s2", model "m", target "dx", repeat 1 lists the classes yes,no, want no,yes`},
		{"unknown observed", "s1,m,dx,1,1,maybe,no,0.4\ns1,m,dx,1,1,maybe,yes,0.6\n",
			`class_predictions.csv: line 2, column 6 ("observed"): observed class "maybe" is not a class of target "dx" (no, yes)`},
		{"probability", "s1,m,dx,1,1,no,no,1.5\n", `class_predictions.csv: line 2, column 8 ("probability"): want a probability between 0 and 1, found "1.5"`},
		{"repeated class", "s1,m,dx,1,1,no,no,0.4\ns1,m,dx,1,1,no,no,0.6\n", `class_predictions.csv: line 3, column 7 ("class")`},
		{"fold", "s1,m,dx,1,1,no,no,0.4\ns1,m,dx,1,2,no,yes,0.6\n", `class_predictions.csv: line 3, column 5 ("fold"): want fold 1, as on line 2`},
		{"observed changes", "s1,m,dx,1,1,no,no,0.4\ns1,m,dx,1,1,yes,yes,0.6\n", `line 3, column 6 ("observed")`},
		{"one class", "s1,m,dx,1,1,no,no,1\n", `class_predictions.csv: line 2: target "dx" has the single class "no"`},
		{"repeat 0", "s1,m,dx,0,1,no,no,1\n", `line 2, column 4 ("repeat"): want a whole number ≥ 1`},
		{"column", "", ""},
	}
	for _, tt := range tests {
		raw := head + tt.body
		if tt.name == "column" {
			raw = "participant_id,model,target,repeat,fold,observed,class\n"
			tt.want = `class_predictions.csv: line 1: no column "probability"`
		}
		_, _, err := parseClassPredictions([]byte(raw), "class_predictions.csv")
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: %v, want an error containing %q", tt.name, err, tt.want)
		}
	}
	rows, labels, err := parseClassPredictions([]byte(head+"s1,m,dx,2,3,,no,0.25\ns1,m,dx,2,3,,yes,0.75\n"), "class_predictions.csv")
	if err != nil || len(rows) != 1 || rows[0].Observed != -1 || rows[0].Repeat != 1 || rows[0].Fold != 2 ||
		!slices.Equal(rows[0].Proba, []float64{0.25, 0.75}) || len(labels) != 1 || !slices.Equal(labels[0].Classes, []string{"no", "yes"}) {
		t.Errorf("a missing label: %+v %+v %v", rows, labels, err)
	}
}

// TestClassSettingsFromExperiment: the report takes the order of the
// labels and the threshold from the run's resolved experiment.toml
// ([cohort] labels, [cv] threshold, decoded as skein run decodes them):
// labels in that order, lexical order without them, threshold 0.5 when
// unset; a threshold outside (0, 1) is refused naming the file and key.
func TestClassSettingsFromExperiment(t *testing.T) {
	tests := []struct {
		name      string
		labels    []string
		threshold *float64
		order     []string
		want      float64
		err       string
	}{
		{name: "unset", order: []string{"diagnosis", "subtype"}, want: 0.5},
		{name: "labels and threshold", labels: []string{"subtype", "diagnosis"}, threshold: new(0.3), order: []string{"subtype", "diagnosis"}, want: 0.3},
		{name: "threshold out of range", threshold: new(1.5), err: "cv.threshold"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			dir, _ := classRun(t)
			path := filepath.Join(dir, experiment.ExperimentFile)
			raw, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			exp, err := experiment.ParseExperiment(raw)
			if err != nil {
				t.Fatal(err)
			}
			exp.Cohort.Labels, exp.CV.Threshold = tt.labels, tt.threshold
			if raw, err = toml.Marshal(exp); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(path, raw, 0o644); err != nil {
				t.Fatal(err)
			}
			r, err := ReadRun(dir)
			if tt.err != "" {
				if err == nil || !strings.Contains(err.Error(), tt.err) || !strings.Contains(err.Error(), experiment.ExperimentFile) {
					t.Fatalf("ReadRun: %v, want an error naming %s and %s", err, experiment.ExperimentFile, tt.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			var order []string
			for _, lt := range r.Labels {
				order = append(order, lt.Name)
			}
			if !slices.Equal(order, tt.order) || r.Threshold() != tt.want {
				t.Errorf("labels %v, threshold %v; want %v, %v", order, r.Threshold(), tt.order, tt.want)
			}
		})
	}
}

// TestNullFiguresOfLabels: the lines of permutations.csv with an
// auc_within cell (a class label's null distribution of AUC within folds)
// read back with their
// p-value, (1 + #{null ≥ observed}) / (1 + permutations) (Phipson &
// Smyth 2010), and draw a histogram beside the scores' in the
// permutation test's section, titled with the observed AUC and p; the
// scores' figures stay.
func TestNullFiguresOfLabels(t *testing.T) {
	dir, _ := classRun(t)
	path := filepath.Join(dir, experiment.PermutationFile)
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSuffix(string(raw), "\n"), "\n")
	var b strings.Builder
	b.WriteString(lines[0] + ",auc_within\n")
	for _, l := range lines[1:] {
		b.WriteString(l + ",\n")
	}
	blank := strings.Repeat(",", strings.Count(lines[0], ",")-2)
	// Observed 0.9; of 9 permutations, 0.95 alone reaches it: p = 2/10.
	for k, auc := range []float64{0.9, 0.5, 0.45, 0.55, 0.6, 0.4, 0.95, 0.52, 0.48, 0.5} {
		fmt.Fprintf(&b, "ridge,diagnosis,%d%s,%g\n", k, blank, auc)
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	r, err := ReadRun(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(r.ClassNulls) != 1 || r.ClassNulls[0].P != 0.2 || len(r.ClassNulls[0].Null) != 9 || len(r.Nulls) == 0 {
		t.Fatalf("class nulls %+v, %d score nulls", r.ClassNulls, len(r.Nulls))
	}
	figs, err := r.NullFigures()
	if err != nil {
		t.Fatal(err)
	}
	i := slices.IndexFunc(figs, func(f Figure) bool { return f.File == "null-ridge-diagnosis.png" })
	if i < 0 || !slices.ContainsFunc(figs, func(f Figure) bool { return f.File == "null-ridge-recall.png" }) {
		t.Fatalf("drew %v, want null-ridge-diagnosis.png beside null-ridge-recall.png", names(figs))
	}
	if f := figs[i]; f.Section != SectionNulls || !strings.Contains(f.Title, "observed AUC within folds = 0.9") || !strings.Contains(f.Title, "p = 0.2") {
		t.Errorf("figure %s in section %q titled %q", f.File, f.Section, f.Title)
	}
}
