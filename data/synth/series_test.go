package synth_test

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/pelletier/go-toml/v2"
	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
)

// TestWriteSeriesLoad: with Series the written experiment file reads the
// time series, and the correlations skein estimates from them are those
// synth gave (to the 6 significant digits the text files keep).
func TestWriteSeriesLoad(t *testing.T) {
	c := generate(t, synth.Config{N: 12, P: 8, Seed: 5, Series: true, TimePoints: 60})
	for _, format := range []string{"tsv", "npy"} {
		dir := filepath.Join(t.TempDir(), "cohort")
		if err := synth.Write(dir, c, format); err != nil {
			t.Fatal(err)
		}
		raw, err := os.ReadFile(filepath.Join(dir, "experiment.toml"))
		if err != nil {
			t.Fatal(err)
		}
		var exp struct {
			Cohort     data.Source     `toml:"cohort"`
			Preprocess data.Preprocess `toml:"preprocess"`
		}
		dec := toml.NewDecoder(bytes.NewReader(raw))
		dec.DisallowUnknownFields()
		if err := dec.Decode(&exp); err != nil {
			t.Fatalf("%s experiment.toml: %v", format, err)
		}
		if exp.Cohort.Functional.Series == "" {
			t.Fatalf("%s: experiment.toml does not read the series", format)
		}
		loaded, err := data.Load(exp.Cohort, exp.Preprocess, dir)
		if err != nil {
			t.Fatalf("%s: %v", format, err)
		}
		for i, p := range loaded.Participants {
			got, want := math.Tanh(p.Functional.At(0, 1)), c.Participants[i].Functional.At(0, 1)
			if math.Abs(got-want) > 1e-4 {
				t.Errorf("%s: %s r[0,1] = %v from the series, synth %v", format, p.ID, got, want)
			}
		}
	}
}

// TestAmplitudes: with Amplitudes the trait moves the variances of set A's
// regions and leaves their correlations alone (common practice, no
// source: a correlation does not change when a series is scaled).
func TestAmplitudes(t *testing.T) {
	c := generate(t, synth.Config{N: 200, P: 16, Seed: 9, Series: true, Amplitudes: true, Targets: 1})
	pt := c.Truth[0]
	e := pt.Positive[0]
	variance, corr := make([]float64, len(c.Series)), make([]float64, len(c.Series))
	for i, x := range c.Series {
		col := make([]float64, x.RawMatrix().Rows)
		for k := range col {
			col[k] = x.At(k, e.I)
		}
		variance[i] = math.Log(stat.Variance(col, nil))
		corr[i] = c.Participants[i].Functional.At(e.I, e.J)
	}
	if r := stat.Correlation(variance, pt.Signal, nil); r < 0.5 {
		t.Errorf("log variance of region %d vs the planted signal: r = %.3f, want above 0.5", e.I, r)
	}
	if r := stat.Correlation(corr, pt.Signal, nil); math.Abs(r) > 0.2 {
		t.Errorf("correlation (%d, %d) vs the planted signal: r = %.3f, want near 0", e.I, e.J, r)
	}
}
