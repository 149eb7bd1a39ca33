package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func runSynthCLI(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var stdout, stderr bytes.Buffer
	code := run(context.Background(), args, commandIO{&stdout, &stderr})
	return code, stdout.String(), stderr.String()
}

// TestSynthThenCheck writes a cohort with skein synth and checks it with
// skein check, in both matrix formats.
func TestSynthThenCheck(t *testing.T) {
	t.Parallel()
	for _, format := range []string{"tsv", "npy"} {
		t.Run(format, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "cohort")
			code, out, errOut := runSynthCLI(t, "synth", "--out", dir, "--n", "24", "--p", "10", "--seed", "3",
				"--format", format, "--siblings", "--family-size", "3", "--motion", "0.3", "--missing", "0.1", "--structural-share", "0.2")
			if code != exitOK {
				t.Fatalf("synth: exit %d: %s", code, errOut)
			}
			for _, want := range []string{"wrote 24 participants, 10 regions", "families of 3", "recall", "ceiling r = 0.800", "not a diagnostic device", "skein check"} {
				if !strings.Contains(out, want) {
					t.Errorf("synth output lacks %q:\n%s", want, out)
				}
			}
			if _, err := os.Stat(filepath.Join(dir, "fc", "sub-001_fc."+format)); err != nil {
				t.Error(err)
			}
			code, out, errOut = runSynthCLI(t, "check", filepath.Join(dir, "experiment.toml"))
			if code != exitOK {
				t.Fatalf("check: exit %d:\n%s\n%s", code, out, errOut)
			}
			if !strings.Contains(out, "24") {
				t.Errorf("check output does not mention the 24 participants:\n%s", out)
			}
		})
	}
}

func TestSynthNull(t *testing.T) {
	t.Parallel()
	dir := filepath.Join(t.TempDir(), "null")
	code, out, errOut := runSynthCLI(t, "synth", "--out", dir, "--n", "12", "--p", "8", "--null", "--targets", "1")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	if !strings.Contains(out, "recall     null") || strings.Contains(out, "fluency") {
		t.Errorf("output:\n%s", out)
	}
}

// TestSynthLabel: --label adds a class label whose oracle AUC the output
// reports, and skein check reads it and prints its class counts.
func TestSynthLabel(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name string
		args []string
		want []string
	}{
		{"planted", []string{"--label", "diagnosis", "--prevalence", "0.4", "--label-auc", "0.9"},
			[]string{"diagnosis  planted group difference on", "patient share 0.40; oracle AUC = 0.900"}},
		{"null", []string{"--label", "dx", "--null-label"}, []string{"dx         null label: independent of the connectomes; patient share 0.30"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "cohort")
			code, out, errOut := runSynthCLI(t, append([]string{"synth", "--out", dir, "--n", "20", "--p", "8", "--seed", "4"}, tc.args...)...)
			if code != exitOK {
				t.Fatalf("synth: exit %d: %s", code, errOut)
			}
			for _, want := range tc.want {
				if !strings.Contains(out, want) {
					t.Errorf("synth output lacks %q:\n%s", want, out)
				}
			}
			code, out, errOut = runSynthCLI(t, "check", filepath.Join(dir, "experiment.toml"))
			if code != exitOK {
				t.Fatalf("check: exit %d:\n%s\n%s", code, out, errOut)
			}
			if !strings.Contains(out, `"control" = 0: `) || !strings.Contains(out, `(positive class "patient")`) {
				t.Errorf("check output lacks the class counts:\n%s", out)
			}
		})
	}
}

func TestSynthRefusesToOverwrite(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "mine.txt"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, errOut := runSynthCLI(t, "synth", "--out", dir, "--n", "12", "--p", "8")
	if code != exitBadInput || !strings.Contains(errOut, "exists and is not empty") || !strings.Contains(errOut, "--force") {
		t.Errorf("exit %d, stderr %q", code, errOut)
	}
	code, _, errOut = runSynthCLI(t, "synth", "--out", dir, "--n", "12", "--p", "8", "--force")
	if code != exitOK {
		t.Fatalf("--force: exit %d: %s", code, errOut)
	}
	if _, err := os.Stat(filepath.Join(dir, "mine.txt")); !os.IsNotExist(err) {
		t.Errorf("--force kept the old file: %v", err)
	}
}

func TestSynthBadOptions(t *testing.T) {
	t.Parallel()
	out := filepath.Join(t.TempDir(), "x")
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"--n", "12"}, "option --out"},
		{[]string{"--out", out, "--n", "3"}, "option --n: got 3, want at least 10 participants"},
		{[]string{"--out", out, "--ceiling", "2"}, "option --ceiling: got 2"},
		{[]string{"--out", out, "--missing", "1"}, "option --missing"},
		{[]string{"--out", out, "--format", "csv"}, `option --format: "csv"`},
		{[]string{"--out", out, "--siblings", "--family-size", "1"}, "option --family-size"},
		{[]string{"--out", out, "--n", "many"}, "-n"},
		{[]string{"--out", out, "extra"}, `unexpected argument "extra"`},
		{[]string{"--out", out, "--prevalence", "0.2"}, "option --prevalence: goes with --label NAME"},
		{[]string{"--out", out, "--label", "dx", "--label-auc", "0.3"}, "option --label-auc: got 0.3, want an AUC in (0.5, 1)"},
		{[]string{"--out", out, "--label", "recall"}, "option --label: got recall"},
	} {
		code, _, errOut := runSynthCLI(t, append([]string{"synth"}, tc.args...)...)
		if code != exitBadInput || !strings.Contains(errOut, tc.want) {
			t.Errorf("%v: exit %d, stderr %q, want exit 2 and %q", tc.args, code, errOut, tc.want)
		}
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("a failed synth left %s", out)
	}
}
