package report

import (
	"bytes"
	"context"
	"encoding/json"
	"encoding/xml"
	"fmt"
	"html/template"
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
	"github.com/skein-neuro/skein/internal/figure"
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
		"answer-recall.png", "answer-fluency.png",
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
		if b.Dx() != f.Width || b.Dy() != f.Height || b.Dy() < 250 {
			t.Errorf("%s: %d × %d pixels, Figure says %d × %d (want at least 250 high)", f.File, b.Dx(), b.Dy(), f.Width, f.Height)
		}
		// A figure is one column (3.5 in) or two (7 in) of a journal page
		// wide (common practice, no source), at DPI.
		if b.Dx() != figure.SingleColumn*DPI && b.Dx() != figure.DoubleColumn*DPI {
			t.Errorf("%s: %d pixels wide, want %v (one column) or %v (two)", f.File, b.Dx(), figure.SingleColumn*DPI, figure.DoubleColumn*DPI)
		}
		// Each kind of figure has a fixed size in inches at DPI (figures.go).
		for prefix, size := range map[string][2]float64{
			"observed-": {figure.SingleColumn, 3.6}, "comparison-": {figure.DoubleColumn, 3.2}, "learning-": {figure.DoubleColumn, 3.6},
			"null-": {figure.SingleColumn, 3}, "importance-": {figure.DoubleColumn, 6},
		} {
			if strings.HasPrefix(f.File, prefix) && (b.Dx() != int(size[0]*DPI) || b.Dy() != int(size[1]*DPI)) {
				t.Errorf("%s: %d × %d pixels, want %v × %v in at %d DPI", f.File, b.Dx(), b.Dy(), size[0], size[1], DPI)
			}
		}
		colours, ink := inkStats(img)
		// A drawn plot has axes, text and data in several colours; the
		// share of non-white pixels of a plot with axes, labels and data
		// is at least a few percent (common practice, no source).
		if colours < 3 || ink < 0.02 || ink > 0.95 {
			t.Errorf("%s: %d colours, %.1f%% non-background pixels: blank or flooded", f.File, colours, 100*ink)
		}
		checkSVG(t, filepath.Join(dir, experiment.FiguresDir, f.SVGFile()), float64(b.Dx())/DPI, float64(b.Dy())/DPI)
	}
}

// checkSVG checks that the SVG at path is well-formed XML of w × h
// inches (72 pt to the inch) whose text is all in the page's fonts.
func checkSVG(t *testing.T, path string, w, h float64) {
	t.Helper()
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Error(err)
		return
	}
	var root struct {
		XMLName xml.Name
		Width   string `xml:"width,attr"`
		Height  string `xml:"height,attr"`
	}
	if err := xml.Unmarshal(raw, &root); err != nil || root.XMLName.Local != "svg" {
		t.Errorf("%s: not an SVG document: %v", path, err)
		return
	}
	if want := fmt.Sprintf("%gpt", w*72); root.Width != want {
		t.Errorf("%s: width %s, want %s", path, root.Width, want)
	}
	if want := fmt.Sprintf("%gpt", h*72); root.Height != want {
		t.Errorf("%s: height %s, want %s", path, root.Height, want)
	}
	family := "font-family:" + strings.ReplaceAll(figure.FontFamily, `"`, "'") + ";"
	texts, inFamily := strings.Count(string(raw), "<text"), strings.Count(string(raw), family)
	if texts == 0 || texts != inFamily {
		t.Errorf("%s: %d texts, %d of them in %s", path, texts, inFamily, figure.FontFamily)
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
	run := func(args ...string) []byte { return runChromium(t, args...) }
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

// TestReportFitsNarrowAndWideScreens opens report.html in headless
// Chromium at two widths, a desktop window (1280 px) and a phone held
// upright (420 px): a test-only wrapper page loads the report in an
// iframe of that width and writes into its DOM the page's scroll width,
// its client width and the right edge of the answer charts, which must
// not overflow the page. It also takes a screenshot of the report at
// each width (kept as report-WIDTH.png in the run folder) and checks that
// it shows the page.
func TestReportFitsNarrowAndWideScreens(t *testing.T) {
	if testing.Short() {
		t.Skip("-short: the browser test starts headless Chromium")
	}
	if _, err := os.Stat(chromium); err != nil {
		t.Skipf("%s not found: the browser test needs Debian's chromium package (apt-get install chromium)", chromium)
	}
	dir, _ := buildTiny(t)
	report, err := filepath.Abs(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	for _, width := range []int{1280, 420} {
		wrapper := filepath.Join(dir, fmt.Sprintf("width-check-%d.html", width))
		check := fmt.Sprintf(`<!DOCTYPE html><html><body style="margin:0">
<iframe id="r" src="%s" width="%d" height="900" style="border:0"></iframe>
<pre id="out">pending</pre>
<script>
document.getElementById("r").addEventListener("load", function () {
  var doc = this.contentDocument, root = doc.documentElement, right = 0;
  var charts = doc.querySelectorAll("#answer-charts img");
  for (var i = 0; i < charts.length; i++) { right = Math.max(right, charts[i].getBoundingClientRect().right); }
  document.getElementById("out").textContent = "scroll=" + root.scrollWidth + " client=" + root.clientWidth +
    " charts=" + charts.length + " right=" + Math.ceil(right);
});
</script></body></html>`, experiment.HTMLFile, width)
		if err := os.WriteFile(wrapper, []byte(check), 0o644); err != nil {
			t.Fatal(err)
		}
		dom := string(runChromium(t, "--run-all-compositor-stages-before-draw", "--virtual-time-budget=5000", "--dump-dom", "file://"+wrapper))
		m := regexp.MustCompile(`scroll=(\d+) client=(\d+) charts=(\d+) right=(\d+)`).FindStringSubmatch(dom)
		if m == nil {
			t.Fatalf("%d px: the check page did not report; its DOM:\n%s", width, dom)
		}
		scroll, _ := strconv.Atoi(m[1])
		client, _ := strconv.Atoi(m[2])
		charts, _ := strconv.Atoi(m[3])
		right, _ := strconv.Atoi(m[4])
		t.Logf("%d px: page scroll width %d, client width %d, %d answer charts reaching %d px", width, scroll, client, charts, right)
		if charts != 2 {
			t.Errorf("%d px: %d answer charts, want one per score (2)", width, charts)
		}
		if client > width || client < width-20 {
			t.Errorf("%d px: the report's client width is %d", width, client)
		}
		if scroll > client {
			t.Errorf("%d px: the page overflows sideways: scroll width %d > client width %d", width, scroll, client)
		}
		if right > client {
			t.Errorf("%d px: the answer charts reach %d px, past the page's %d", width, right, client)
		}

		shot := filepath.Join(dir, fmt.Sprintf("report-%d.png", width))
		runChromium(t, fmt.Sprintf("--window-size=%d,1600", width), "--hide-scrollbars", "--screenshot="+shot, "file://"+report)
		raw, err := os.ReadFile(shot)
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(bytes.NewReader(raw))
		if err != nil {
			t.Fatalf("%d px screenshot: %v", width, err)
		}
		if b := img.Bounds(); b.Dx() != width {
			t.Errorf("%d px screenshot is %d px wide", width, b.Dx())
		}
		if colours, ink := inkStats(img); colours < 10 || ink < 0.05 {
			t.Errorf("%d px screenshot: %d colours, %.1f%% ink: the page looks blank", width, colours, 100*ink)
		}
		if keep := os.Getenv("SKEIN_REPORT_SCREENSHOTS"); keep != "" {
			os.WriteFile(filepath.Join(keep, filepath.Base(shot)), raw, 0o644)
		}
	}
}

// runChromium runs headless Chromium with args and returns its output.
func runChromium(t *testing.T, args ...string) []byte {
	t.Helper()
	flags := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--allow-file-access-from-files", "--user-data-dir=" + t.TempDir()}
	cmd := exec.Command(chromium, append(flags, args...)...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("chromium %v: %v\n%s", args, err, stderr.String())
	}
	return out
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
	// The key names the colour of each fold and the line styles.
	for _, label := range []string{"r1 f1", "r1 f2", "training loss", "inner-validation loss", "kept epoch (early stopping)"} {
		if !bytes.Contains(figs[0].SVG, []byte(">"+label+"<")) {
			t.Errorf("the key of the learning curves lacks %q", label)
		}
	}
}

// TestReportOpensWithTheAnswer: report.html opens, before its summary,
// with the sentence summary.md opens with, then the answer chart of each
// score; every figure links its SVG; the page's font is the figures'.
func TestReportOpensWithTheAnswer(t *testing.T) {
	dir, figs := buildTiny(t)
	raw, err := os.ReadFile(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	page := string(raw)
	md, err := os.ReadFile(filepath.Join(dir, experiment.SummaryFile))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(string(md), "\n")
	if len(lines) < 3 || lines[0] != "# skein run summary" {
		t.Fatalf("summary.md opens with %q", lines[:min(3, len(lines))])
	}
	answer := lines[2]
	// The tiny network's graph_conv branch propagates over the structural
	// graph: it fuses structure with function; ridge is the reference.
	if !strings.HasPrefix(answer, "Fusing structure with function ") || !strings.Contains(answer, "for ridge") {
		t.Errorf("summary.md's answer: %s", answer)
	}
	answer = regexp.MustCompile(`\\([[:punct:]])`).ReplaceAllString(answer, "$1") // summary.md escapes Markdown
	para := `<p class="answer">` + template.HTMLEscapeString(answer) + `</p>`
	at, summary := strings.Index(page, para), strings.Index(page, `<h2 id="summary">`)
	if at < 0 || summary < at {
		t.Errorf("report.html does not open with the answer %q before its summary", para)
	}
	if strings.Count(page, template.HTMLEscapeString(answer)) != 1 {
		t.Error("the answer is repeated in report.html")
	}
	firstChart := strings.Index(page, `alt="recall: r within folds and MAE of every model"`)
	if firstChart < at || firstChart > summary {
		t.Error("the answer chart of recall is not between the answer and the summary")
	}
	for _, f := range figs {
		if !strings.Contains(page, `<a href="figures/`+f.SVGFile()+`">SVG</a>`) {
			t.Errorf("report.html does not link %s", f.SVGFile())
		}
	}
	if !strings.Contains(page, "font-family: "+figure.FontFamily+";") {
		t.Errorf("the page's CSS does not use the figures' fonts %s", figure.FontFamily)
	}
}

// TestOneOrderEverywhere: the tiny experiment lists mean, ridge, net and
// the scores recall, fluency; every table and every kind of figure of the
// report, and importance.csv, list them in that order (fluency would come
// first by name, as would mean and net before ridge).
func TestOneOrderEverywhere(t *testing.T) {
	dir, figs := buildTiny(t)
	raw, err := os.ReadFile(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	page := string(raw)
	inOrder := func(what, text string, words ...string) {
		t.Helper()
		rest := text
		for _, w := range words {
			_, after, ok := strings.Cut(rest, w)
			if !ok {
				t.Errorf("%s: %q missing or out of order (want %v)", what, w, words)
				return
			}
			rest = after
		}
	}
	md, err := os.ReadFile(filepath.Join(dir, experiment.SummaryFile))
	if err != nil {
		t.Fatal(err)
	}
	metrics, comparison, _ := strings.Cut(string(md), "## Comparison")
	inOrder("summary.md metrics", metrics, "### recall", "| mean |", "| ridge |", "| net |", "### fluency", "| mean |", "| ridge |", "| net |")
	inOrder("summary.md comparison", comparison, "### recall", "| mean (baseline) |", "| ridge (baseline) |", "| net |", "### fluency")
	inOrder("report models table", page, `<table id="models">`, "<td>mean</td>", "<td>ridge</td>", "<td>net</td>")
	inOrder("report answer charts", page, "answer-recall.svg", "answer-fluency.svg", `<h2 id="summary">`)
	for _, prefix := range []string{"observed-", "importance-", "null-"} {
		var got []string
		for _, f := range figs {
			if strings.HasPrefix(f.File, prefix) {
				got = append(got, f.File)
			}
		}
		want := map[string][]string{
			"observed-":   {"observed-mean-recall.png", "observed-mean-fluency.png", "observed-ridge-recall.png", "observed-ridge-fluency.png", "observed-net-recall.png", "observed-net-fluency.png"},
			"importance-": {"importance-ridge-recall.png", "importance-ridge-fluency.png", "importance-net-recall-b1-functional.png", "importance-net-fluency-b1-functional.png", "importance-net-recall-b2-functional.png", "importance-net-fluency-b2-functional.png"},
			"null-":       {"null-ridge-recall.png", "null-ridge-fluency.png"},
		}[prefix]
		if strings.Join(got, " ") != strings.Join(want, " ") {
			t.Errorf("%s figures in order %v, want %v", prefix, got, want)
		}
	}
	csvRaw, err := os.ReadFile(filepath.Join(dir, experiment.ImportanceFile))
	if err != nil {
		t.Fatal(err)
	}
	inOrder("importance.csv", string(csvRaw), "\nridge,recall,", "\nridge,fluency,", "\nnet,recall,", "\nnet,fluency,")
}

// TestReportShowsTheApplicableExperiment: the experiment in the report
// leaves out what does not apply to the tiny run (ridge has no network
// keys anyway; the network's Adam run leaves out SGD's momentum; no
// sample-size curve, no drift rule) and keeps what does.
func TestReportShowsTheApplicableExperiment(t *testing.T) {
	dir, _ := buildTiny(t)
	raw, err := os.ReadFile(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	_, shown, _ := strings.Cut(string(raw), `<h2 id="reproduce">`)
	for _, want := range []string{"[model.ridge]", "beta1 = 0.9", "count = 19", "inner_validation = 0.2"} {
		if !strings.Contains(shown, want) {
			t.Errorf("the experiment shown lacks %q", want)
		}
	}
	for _, gone := range []string{"momentum", "[sample_size]", "[drift]", "step_epochs", "views = []", "size = 0"} {
		if strings.Contains(shown, gone) {
			t.Errorf("the experiment shown has %q, which does not apply", gone)
		}
	}
	full, err := os.ReadFile(filepath.Join(dir, experiment.ExperimentFile))
	if err != nil || !strings.Contains(string(full), "momentum") {
		t.Errorf("experiment.toml itself must keep every key (%v)", err)
	}
}

// TestReportOfAnEarlierRun: a run folder made before skein wrote
// comparison.csv still gets its report, which says why it has no answer
// and draws no answer chart.
func TestReportOfAnEarlierRun(t *testing.T) {
	src, _ := buildTiny(t)
	dir := filepath.Join(t.TempDir(), "run")
	if err := os.CopyFS(dir, os.DirFS(src)); err != nil {
		t.Fatal(err)
	}
	if err := os.Remove(filepath.Join(dir, experiment.ComparisonFile)); err != nil {
		t.Fatal(err)
	}
	figs, err := Build(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range figs {
		if f.Section == SectionAnswer {
			t.Errorf("drew %s without comparison.csv", f.File)
		}
	}
	page, err := os.ReadFile(filepath.Join(dir, experiment.HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(page), "This run folder has no comparison.csv") || !strings.Contains(string(page), "not a diagnostic device") {
		t.Error("the report of an earlier run does not say why it has no answer, or lacks the disclaimer")
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
