package report

import (
	"bytes"
	"context"
	"encoding/json"
	"image"
	"image/color"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/train"
)

// tinyModels is a small experiment: the mean, ridge and a tiny two-branch
// graph network, with a short permutation test of ridge.
const tinyModels = `
[cv]
folds = 3
repeats = 1
inner_validation = 0.2

[permutation]
count = 19
models = ["ridge"]

[[model]]
name = "mean"
[model.mean]

[[model]]
name = "ridge"
[model.ridge]
input = "functional"

[[model]]
name = "net"
[model.network]
head = [4]
epochs = 6
batch_size = 8
[[model.network.branch]]
input = "functional"
layers = [{kind = "e2e", channels = 3}, {kind = "e2n", channels = 4}, {kind = "n2g", size = 4}]
[[model.network.branch]]
input = "functional"
operator = "renormalized-adjacency"
layers = [{kind = "graph_conv", size = 3}, {kind = "n2g", size = 4}]
`

// tinyRun makes a finished run folder as skein run does (without the
// figures) and returns its path.
func tinyRun(t *testing.T, root string) string {
	t.Helper()
	c, err := synth.Generate(synth.Config{N: 45, P: 8, Seed: 11, FamilySize: 3})
	if err != nil {
		t.Fatal(err)
	}
	cohortDir := filepath.Join(root, "cohort")
	if err := synth.Write(cohortDir, c, "tsv"); err != nil {
		t.Fatal(err)
	}
	expPath := filepath.Join(cohortDir, "experiment.toml")
	raw, err := os.ReadFile(expPath)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(expPath, append(raw, tinyModels...), 0o644); err != nil {
		t.Fatal(err)
	}
	exp, err := experiment.ReadExperiment(expPath)
	if err != nil {
		t.Fatal(err)
	}
	cohort, cohortReport, err := data.Check(exp.Cohort, exp.Preprocess, exp.Dir)
	if err != nil {
		t.Fatal(err)
	}
	rd, err := experiment.OpenRunDir(filepath.Join(root, "run"), false, false)
	if err != nil {
		t.Fatal(err)
	}
	resolved, err := toml.Marshal(exp)
	if err != nil {
		t.Fatal(err)
	}
	cohortJSON, err := json.Marshal(cohortReport)
	if err != nil {
		t.Fatal(err)
	}
	for name, content := range map[string][]byte{experiment.ExperimentFile: resolved, experiment.CohortFile: cohortJSON, experiment.VersionsFile: []byte("go test\nseed 2026\n")} {
		if err := rd.WriteFile(name, content); err != nil {
			t.Fatal(err)
		}
	}
	runner := &train.Runner{Design: exp.Design(), Cohort: cohort, Jobs: 2, Checkpoints: rd.Checkpoints(), Models: rd.ModelsDir()}
	res, err := runner.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	rep, err := experiment.Evaluate(context.Background(), exp, runner, res, 0)
	if err != nil {
		t.Fatal(err)
	}
	if err := rep.Write(rd); err != nil {
		t.Fatal(err)
	}
	if err := WriteRegions(rd.Partial, cohort.Regions); err != nil {
		t.Fatal(err)
	}
	if err := rd.Commit(); err != nil {
		t.Fatal(err)
	}
	return rd.Final
}

// builtRun is one tiny run with its figures and report, made once in a
// folder that TestMain removes, and shared by the tests of this file.
var builtRun struct {
	root string
	dir  string
	figs []Figure
	err  error
}

func TestMain(m *testing.M) {
	root, err := os.MkdirTemp("", "skein-report-test")
	if err != nil {
		panic(err)
	}
	builtRun.root = root
	code := m.Run()
	os.RemoveAll(root)
	os.Exit(code)
}

func buildTiny(t *testing.T) (string, []Figure) {
	t.Helper()
	if builtRun.dir == "" && builtRun.err == nil {
		dir := tinyRun(t, builtRun.root)
		builtRun.dir = dir
		builtRun.figs, builtRun.err = Build(dir)
	}
	if builtRun.err != nil {
		t.Fatal(builtRun.err)
	}
	return builtRun.dir, builtRun.figs
}

func TestBuildDrawsEveryFigure(t *testing.T) {
	dir, figs := buildTiny(t)
	want := []string{
		"comparison-fluency.png", "comparison-recall.png",
		"observed-mean-recall.png", "observed-ridge-recall.png", "observed-net-fluency.png",
		"learning-net.png",
		"null-ridge-recall.png", "null-ridge-fluency.png",
		"filters-net-b1.png",
		"importance-ridge-recall.png",
		// One map per input view of a network of two branches.
		"importance-net-fluency-b1-functional.png", "importance-net-fluency-b2-functional.png",
		"cohort.png",
	}
	byName := make(map[string]Figure)
	for _, f := range figs {
		byName[f.File] = f
	}
	for _, name := range want {
		if _, ok := byName[name]; !ok {
			t.Errorf("no figure %s; drew %v", name, names(figs))
		}
	}
	for _, f := range figs {
		raw, err := os.ReadFile(filepath.Join(dir, experiment.FiguresDir, f.File))
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(bytes.NewReader(raw))
		if err != nil {
			t.Errorf("%s: not a PNG: %v", f.File, err)
			continue
		}
		b := img.Bounds()
		if b.Dx() != f.Width || b.Dy() != f.Height || b.Dx() < 300 || b.Dy() < 250 {
			t.Errorf("%s: %d × %d pixels, Figure says %d × %d (want at least 300 × 250)", f.File, b.Dx(), b.Dy(), f.Width, f.Height)
		}
		// Each kind of figure has a fixed size in inches at DPI (figures.go).
		for prefix, size := range map[string][2]int{
			"observed-": {6 * DPI, 5 * DPI}, "comparison-": {10 * DPI, 4.5 * DPI}, "learning-": {7 * DPI, 4.5 * DPI},
			"null-": {6 * DPI, 4 * DPI}, "importance-": {7 * DPI, 6 * DPI},
		} {
			if strings.HasPrefix(f.File, prefix) && (b.Dx() != size[0] || b.Dy() != size[1]) {
				t.Errorf("%s: %d × %d pixels, want %d × %d", f.File, b.Dx(), b.Dy(), size[0], size[1])
			}
		}
		colours, ink := inkStats(img)
		// A drawn plot has axes, text and data in several colours; the
		// share of non-white pixels of a plot with axes, labels and data
		// is at least a few percent (common practice, no source).
		if colours < 3 || ink < 0.02 || ink > 0.95 {
			t.Errorf("%s: %d colours, %.1f%% non-background pixels: blank or flooded", f.File, colours, 100*ink)
		}
	}
}

// inkStats returns the number of distinct colours of img (up to 1000) and
// the fraction of pixels that are not white.
func inkStats(img image.Image) (colours int, ink float64) {
	b := img.Bounds()
	seen := make(map[color.RGBA]bool)
	var n, dark int
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, a := img.At(x, y).RGBA()
			c := color.RGBA{uint8(r >> 8), uint8(g >> 8), uint8(bl >> 8), uint8(a >> 8)}
			if len(seen) < 1000 {
				seen[c] = true
			}
			n++
			if c != (color.RGBA{255, 255, 255, 255}) {
				dark++
			}
		}
	}
	return len(seen), float64(dark) / float64(n)
}

func names(figs []Figure) []string {
	var out []string
	for _, f := range figs {
		out = append(out, f.File)
	}
	return out
}

func TestReportHTMLIsSelfContained(t *testing.T) {
	dir, figs := buildTiny(t)
	raw, err := os.ReadFile(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	page := string(raw)
	for _, want := range []string{"<table", "not a diagnostic device", "ethics approval", "[[model]]", "go test", "Pearson r"} {
		if !strings.Contains(page, want) {
			t.Errorf("report.html lacks %q", want)
		}
	}
	if n := strings.Count(page, `src="data:image/png;base64,`); n != len(figs) {
		t.Errorf("%d embedded images, want %d", n, len(figs))
	}
	if !regexp.MustCompile(`Seed -?[0-9]+`).MatchString(page) {
		t.Error("report.html does not give the seed")
	}
	// Nothing is fetched: no http(s) URL in any src or href, no script.
	if m := regexp.MustCompile(`(?i)(src|href)="(https?:)?//`).FindString(page); m != "" {
		t.Errorf("report.html refers to the network: %s", m)
	}
	if strings.Contains(page, "<script") {
		t.Error("report.html has a script; it must read without one")
	}
}

func TestReadRunErrorsNameTheFile(t *testing.T) {
	dir := t.TempDir()
	if _, err := ReadRun(dir); err == nil || !strings.Contains(err.Error(), "experiment.toml") {
		t.Errorf("empty folder: %v, want an error naming experiment.toml", err)
	}
	bad := []byte("model,repeat,fold,epoch,train_loss,valid_loss,best\nnet,1,1,1,0.5,,2\n")
	if _, err := parseCurves(bad, "learning_curves.csv"); err == nil ||
		!strings.Contains(err.Error(), `learning_curves.csv: line 2, column 7 ("best"): want 0 or 1, found "2"`) {
		t.Errorf("bad best: %v", err)
	}
}

// chromium is Debian's headless browser; .ci/run installs it.
const chromium = "/usr/bin/chromium"

// TestReportOpensInBrowser opens report.html from disk (file://) in
// headless Chromium. A test-only wrapper page loads the report in an
// iframe and writes, after the images had time to load, how many images
// the report has, how many loaded (naturalWidth > 0) and how many tables
// it has; the dumped DOM must show every image loaded. It also takes a
// screenshot of the report itself (kept as report.png in the run folder).
func TestReportOpensInBrowser(t *testing.T) {
	if testing.Short() {
		t.Skip("-short: the browser test starts headless Chromium")
	}
	if _, err := os.Stat(chromium); err != nil {
		t.Skipf("%s not found: the browser test needs Debian's chromium package (apt-get install chromium)", chromium)
	}
	dir, figs := buildTiny(t)
	report, err := filepath.Abs(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	wrapper := filepath.Join(dir, "browser-check.html")
	check := `<!DOCTYPE html><html><body><iframe id="r" src="` + experiment.HTMLFile + `" width="1200" height="900"></iframe>
<pre id="out">pending</pre>
<script>
document.getElementById("r").addEventListener("load", function () {
  var doc = this.contentDocument, imgs = doc.images, ok = 0;
  for (var i = 0; i < imgs.length; i++) { if (imgs[i].complete && imgs[i].naturalWidth > 0) ok++; }
  document.getElementById("out").textContent = "images=" + imgs.length + " loaded=" + ok +
    " tables=" + doc.getElementsByTagName("table").length;
});
</script></body></html>`
	if err := os.WriteFile(wrapper, []byte(check), 0o644); err != nil {
		t.Fatal(err)
	}
	profile := t.TempDir()
	flags := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--allow-file-access-from-files", "--user-data-dir=" + profile}
	run := func(args ...string) []byte {
		cmd := exec.Command(chromium, append(flags, args...)...)
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		out, err := cmd.Output()
		if err != nil {
			t.Fatalf("chromium %v: %v\n%s", args, err, stderr.String())
		}
		return out
	}
	dom := string(run("--run-all-compositor-stages-before-draw", "--virtual-time-budget=5000", "--dump-dom", "file://"+wrapper))
	m := regexp.MustCompile(`images=(\d+) loaded=(\d+) tables=(\d+)`).FindStringSubmatch(dom)
	if m == nil {
		t.Fatalf("the check page did not report; its DOM:\n%s", dom)
	}
	if m[1] != m[2] || m[1] != strconv.Itoa(len(figs)) {
		t.Errorf("browser: %s images, %s loaded, want all %d figures loaded", m[1], m[2], len(figs))
	}
	if m[3] == "0" {
		t.Error("browser: the report has no table")
	}
	shot := filepath.Join(dir, "report.png")
	run("--window-size=1200,2400", "--screenshot="+shot, "file://"+report)
	raw, err := os.ReadFile(shot)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(raw))
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	if colours, ink := inkStats(img); colours < 10 || ink < 0.05 {
		t.Errorf("screenshot: %d colours, %.1f%% ink: the page looks blank", colours, 100*ink)
	}
	if keep := os.Getenv("SKEIN_REPORT_SCREENSHOT"); keep != "" {
		os.WriteFile(keep, raw, 0o644)
	}
}

// TestBuildReportsBrokenPartsAndDrawsTheRest breaks the importance of one
// unit checkpoint: Build must still draw the other figures and write
// report.html, list the problem at its top and return it.
func TestBuildReportsBrokenPartsAndDrawsTheRest(t *testing.T) {
	src, _ := buildTiny(t)
	dir := filepath.Join(t.TempDir(), "run")
	if err := os.CopyFS(dir, os.DirFS(src)); err != nil {
		t.Fatal(err)
	}
	unit := filepath.Join(dir, experiment.UnitsDir, "ridge", "r1-f1.json")
	raw, err := os.ReadFile(unit)
	if err != nil {
		t.Fatal(err)
	}
	var u map[string]any
	if err := json.Unmarshal(raw, &u); err != nil {
		t.Fatal(err)
	}
	maps := u["importance"].([]any)
	u["importance"] = maps[:1] // one map for two targets
	raw, _ = json.Marshal(u)
	if err := os.WriteFile(unit, raw, 0o644); err != nil {
		t.Fatal(err)
	}
	os.Remove(filepath.Join(dir, experiment.HTMLFile))
	figs, err := Build(dir)
	if err == nil || !strings.Contains(err.Error(), "1 importance maps for 2 targets") {
		t.Fatalf("Build: %v, want the broken importance named", err)
	}
	if len(figs) == 0 {
		t.Fatal("no figures drawn")
	}
	page, err := os.ReadFile(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(page), `id="problems"`) || !strings.Contains(string(page), "1 importance maps for 2 targets") {
		t.Error("report.html does not list the problem")
	}
}

// learning_curves.csv with and without the member column (files of runs
// before ensembles have none); an ensemble draws one line per member and
// says so in the caption.
func TestCurvesWithMembers(t *testing.T) {
	old := []byte("model,repeat,fold,epoch,train_loss,valid_loss,best\nnet,1,1,1,0.5,,1\n")
	pts, err := parseCurves(old, "learning_curves.csv")
	if err != nil || len(pts) != 1 || pts[0].Member != 0 {
		t.Fatalf("without member column: %+v, %v", pts, err)
	}
	raw := []byte("model,repeat,fold,member,epoch,train_loss,valid_loss,best\n" +
		"net,1,1,1,1,0.9,0.8,1\nnet,1,1,1,2,0.7,0.6,1\nnet,1,1,2,1,0.8,0.9,1\nnet,1,2,1,1,0.9,0.8,1\nnet,1,2,2,1,0.5,0.5,1\n")
	if pts, err = parseCurves(raw, "learning_curves.csv"); err != nil || pts[2].Member != 2 || pts[2].Epoch != 1 {
		t.Fatalf("with member column: %+v, %v", pts, err)
	}
	bad := []byte("model,repeat,fold,member,epoch,train_loss,valid_loss,best\nnet,1,1,x,1,0.5,,1\n")
	if _, err := parseCurves(bad, "learning_curves.csv"); err == nil || !strings.Contains(err.Error(), `column 4 ("member")`) {
		t.Errorf("bad member: %v", err)
	}
	figs, err := (&Run{Curves: pts}).LearningFigures()
	if err != nil || len(figs) != 1 {
		t.Fatalf("LearningFigures: %d figures, %v", len(figs), err)
	}
	if c := figs[0].Caption; !strings.HasPrefix(c, "2 folds") || !strings.Contains(c, "ensemble of 2 networks") {
		t.Errorf("caption %q", c)
	}
}

// TestImportanceNamesViews: importance.csv, the figures and the page say
// which input view each map is of; the two branches of the network have a
// map each, never summed.
func TestImportanceNamesViews(t *testing.T) {
	dir, figs := buildTiny(t)
	raw, err := os.ReadFile(filepath.Join(dir, experiment.ImportanceFile))
	if err != nil {
		t.Fatal(err)
	}
	csvText := string(raw)
	if !strings.HasPrefix(csvText, "model,target,view,region_i,region_j,") {
		t.Errorf("importance.csv header: %q", strings.SplitN(csvText, "\n", 2)[0])
	}
	for _, want := range []string{"\nnet,recall,branch 1: functional,", "\nnet,recall,branch 2: functional,", "\nridge,recall,functional,"} {
		if !strings.Contains(csvText, want) {
			t.Errorf("importance.csv lacks a line starting %q", want)
		}
	}
	var titled bool
	for _, f := range figs {
		if f.File == "importance-net-recall-b2-functional.png" {
			titled = strings.Contains(f.Title, "branch 2: functional edges' importance") &&
				strings.Contains(f.Caption, "of the branch 2: functional input's edges alone")
		}
	}
	if !titled {
		t.Error("the figure of branch 2 does not name its view in title and caption")
	}
	html, err := os.ReadFile(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(html), "net — recall — branch 2: functional edges</h3>") {
		t.Error("report.html has no section for branch 2's map")
	}
}
