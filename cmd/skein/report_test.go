package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data/synth"
)

func TestRunWritesReportAndReportRebuildsIt(t *testing.T) {
	t.Parallel()
	exp := synthExperiment(t, synth.Config{N: 30, P: 8, Seed: 6}, meanModel+"\n[[model]]\nname = \"ridge\"\n[model.ridge]\n")
	out := filepath.Join(t.TempDir(), "run")
	if code, _, stderr := runSkein(t, "run", exp, "--out", out); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	for _, name := range []string{"report.html", "regions.txt", "importance.csv", "figures/observed-ridge-recall.png", "figures/importance-ridge-recall.png"} {
		if _, err := os.Stat(filepath.Join(out, name)); err != nil {
			t.Errorf("the run folder lacks %s", name)
		}
	}
	before, _ := os.ReadFile(filepath.Join(out, "report.html"))
	os.RemoveAll(filepath.Join(out, "figures"))
	os.Remove(filepath.Join(out, "report.html"))

	code, stdout, stderr := runSkein(t, "report", out)
	if code != exitOK {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	if !strings.Contains(stdout, "report.html") {
		t.Errorf("report said %q", stdout)
	}
	after, err := os.ReadFile(filepath.Join(out, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	if string(before) != string(after) {
		t.Error("skein report wrote another report.html than the run did")
	}
	if _, err := os.Stat(filepath.Join(out, "figures", "comparison-recall.png")); err != nil {
		t.Error("skein report did not draw the figures again")
	}
}

func TestReportBadInput(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"report"}, "want one run folder"},
		{[]string{"report", filepath.Join(dir, "missing")}, "no such file"},
		{[]string{"report", dir}, "experiment.toml"},
	} {
		code, _, stderr := runSkein(t, tc.args...)
		if code != exitBadInput || !strings.Contains(stderr, tc.want) {
			t.Errorf("%v: exit %d, %q; want %d and %q", tc.args, code, stderr, exitBadInput, tc.want)
		}
	}
}
