package synth

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestAddSites: every participant gets a site in turn, functional matrices
// stay symmetric correlations with a unit diagonal, structural ones are
// untouched, and the scores move by ScoreShift·c_b SDs.
func TestAddSites(t *testing.T) {
	plain, err := Generate(Config{N: 30, P: 8, Seed: 2, Targets: 1, TimePoints: 50})
	if err != nil {
		t.Fatal(err)
	}
	sited, err := Generate(Config{N: 30, P: 8, Seed: 2, Targets: 1, TimePoints: 50})
	if err != nil {
		t.Fatal(err)
	}
	if err := sited.AddSites(Sites{Count: 3, EdgeShift: 0.3, EdgeScale: 0.2, ScoreShift: 1, Seed: 1}); err != nil {
		t.Fatal(err)
	}
	for i, p := range sited.Participants {
		if want := string(rune('A' + i%3)); p.Site != "site-"+want {
			t.Fatalf("participant %d at %q, want site-%s", i, p.Site, want)
		}
		f := p.Functional
		if !mat.Equal(f, f.T()) || mat.Max(f) > 1 || mat.Min(f) < -1 || f.At(0, 0) != 1 {
			t.Fatalf("participant %d: functional matrix is not a symmetric correlation matrix", i)
		}
		if !mat.Equal(p.Structural, plain.Participants[i].Structural) {
			t.Fatalf("participant %d: structural matrix changed", i)
		}
	}
	// Site A (c = −1) and site C (c = +1) move by −1 and +1 SD; site B stays.
	d0 := sited.Participants[0].Scores[0] - plain.Participants[0].Scores[0]
	d1 := sited.Participants[1].Scores[0] - plain.Participants[1].Scores[0]
	d2 := sited.Participants[2].Scores[0] - plain.Participants[2].Scores[0]
	if !(d0 < 0) || math.Abs(d1) > 1e-12 || math.Abs(d0+d2) > 1e-9 {
		t.Errorf("score shifts %v, %v, %v; want −s, 0, +s", d0, d1, d2)
	}
	dir := filepath.Join(t.TempDir(), "cohort")
	if err := Write(dir, sited, "tsv"); err != nil {
		t.Fatal(err)
	}
	exp, err := os.ReadFile(filepath.Join(dir, "experiment.toml"))
	if err != nil {
		t.Fatal(err)
	}
	table, err := os.ReadFile(filepath.Join(dir, "participants.tsv"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(exp), "site = \"site\"\n") || !strings.HasPrefix(string(table), "participant_id\tsite\t") {
		t.Errorf("written cohort lacks its site column:\n%s", exp)
	}
	if err := sited.AddSites(Sites{Count: 1}); err == nil {
		t.Error("one site: no error")
	}
}
