package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf8"
)

// runMetrics runs "skein metrics ARGS" and returns the exit code, stdout
// and stderr.
func runMetrics(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var stdout, stderr bytes.Buffer
	code := run(context.Background(), append([]string{"metrics"}, args...), commandIO{&stdout, &stderr})
	return code, stdout.String(), stderr.String()
}

func writeCSV(t *testing.T, text string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "scores.csv")
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func TestMetricsTable(t *testing.T) {
	t.Parallel()
	fixture := filepath.Join("..", "..", "testdata", "eval", "predictions.csv")
	code, out, errOut := runMetrics(t, fixture)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, want := range []string{"192 predictions", "graphnet", "anxiety", "pooled", "6 folds", "mean ± SD over the test folds", "Pearson r", "not a diagnostic device"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	// The tables are split to fit a terminal of 100 columns.
	for _, line := range strings.Split(out, "\n") {
		if n := utf8.RuneCountInString(line); n > 100 {
			t.Errorf("line of %d characters: %q", n, line)
		}
	}
}

// The JSON agrees with the figures of the eval package, which its own tests
// check against scipy and scikit-learn; here: flags after the file, --bins.
func TestMetricsJSON(t *testing.T) {
	t.Parallel()
	path := writeCSV(t, "model,observed,predicted,age\nA,1,1.5,30\nA,2,2.5,31\nA,3,2,32\nA,4,,33\nB,1,3,30\nB,2,2,31\n")
	code, out, errOut := runMetrics(t, path, "--json", "--bins", "2")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	if !strings.Contains(errOut, "columns not used: age") {
		t.Errorf("stderr %q does not mention the unused column", errOut)
	}
	var got struct {
		Bins   int `json:"bins"`
		Groups []struct {
			Model  string `json:"model"`
			Pooled struct {
				N       int     `json:"n"`
				Missing int     `json:"missing"`
				MAE     float64 `json:"mae"`
			} `json:"pooled"`
			Folds []json.RawMessage `json:"folds"`
		} `json:"groups"`
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatalf("%v in\n%s", err, out)
	}
	if got.Bins != 2 || len(got.Groups) != 2 {
		t.Fatalf("bins %d, %d groups", got.Bins, len(got.Groups))
	}
	a := got.Groups[0]
	// MAE of A by hand: (0.5 + 0.5 + 1) / 3.
	if a.Model != "A" || a.Pooled.N != 3 || a.Pooled.Missing != 1 || a.Pooled.MAE != 2.0/3 || len(a.Folds) != 0 {
		t.Errorf("group A = %+v", a)
	}
}

func TestMetricsBadInput(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name string
		args []string
		want string
	}{
		{"no file", nil, "want one CSV file"},
		{"missing file", []string{"no/such/file.csv"}, "no/such/file.csv"},
		{"missing column", []string{writeCSV(t, "observed,guess\n1,2\n")}, `scores.csv: line 1: no "predicted" column`},
		{"not a number", []string{writeCSV(t, "observed,predicted\n1,2\n3,4\nfive,6\n")}, `scores.csv: line 4, column 1 ("observed"): expected a number (or empty, NaN or NA for a missing value), found "five"`},
		{"bad fold", []string{writeCSV(t, "observed,predicted,repeat,fold\n1,2,1,first\n")}, `scores.csv: line 2, column 4 ("fold"): expected an integer ≥ 1 (repeats and folds are numbered from 1), found "first"`},
		{"header only", []string{writeCSV(t, "observed,predicted\n")}, "no rows after the header"},
		{"bad bins", []string{"--bins", "0", "x.csv"}, "--bins: want an integer ≥ 1, got 0"},
		{"unknown flag", []string{"--colour", "x.csv"}, "flag provided but not defined"},
	}
	for _, tt := range tests {
		code, _, errOut := runMetrics(t, tt.args...)
		if code != exitBadInput {
			t.Errorf("%s: exit %d, want %d", tt.name, code, exitBadInput)
		}
		if !strings.Contains(errOut, tt.want) {
			t.Errorf("%s: stderr %q lacks %q", tt.name, errOut, tt.want)
		}
	}
}

func TestMetricsHelp(t *testing.T) {
	t.Parallel()
	code, _, errOut := runMetrics(t, "-h")
	if code != exitOK || !strings.Contains(errOut, "usage: skein metrics FILE ") {
		t.Errorf("exit %d, stderr %q", code, errOut)
	}
}

// TestMetricsReadsTSV: the fixture written tab-separated, as .tsv and as a
// file without extension, gives the same figures as the CSV.
func TestMetricsReadsTSV(t *testing.T) {
	t.Parallel()
	fixture := filepath.Join("..", "..", "testdata", "eval", "predictions.csv")
	raw, err := os.ReadFile(fixture)
	if err != nil {
		t.Fatal(err)
	}
	code, want, errOut := runMetrics(t, fixture)
	if code != exitOK {
		t.Fatalf("csv: exit %d: %s", code, errOut)
	}
	want = strings.Replace(want, fixture, "FILE", 1)
	dir := t.TempDir()
	tsv := []byte(strings.ReplaceAll(string(raw), ",", "\t"))
	for _, name := range []string{"predictions.tsv", "predictions.TSV", "predictions"} {
		path := filepath.Join(dir, name)
		if err := os.WriteFile(path, tsv, 0o644); err != nil {
			t.Fatal(err)
		}
		code, got, errOut := runMetrics(t, path)
		if code != exitOK {
			t.Fatalf("%s: exit %d: %s", name, code, errOut)
		}
		if got = strings.Replace(got, path, "FILE", 1); got != want {
			t.Errorf("%s: output differs from the CSV's:\n%s\nwant\n%s", name, got, want)
		}
	}
}
