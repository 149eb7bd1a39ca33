package train

import (
	"encoding/csv"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// readComBatTable reads a table of testdata/combat: site, age, sex, then
// the features, one row per participant.
func readComBatTable(t *testing.T, path string) (sites []string, cov, y *mat.Dense) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	rows = rows[1:]
	G := len(rows[0]) - 3
	cov = mat.NewDense(len(rows), 2, nil)
	y = mat.NewDense(len(rows), G, nil)
	for i, row := range rows {
		sites = append(sites, row[0])
		for j, cell := range row[1:] {
			v, err := strconv.ParseFloat(cell, 64)
			if err != nil {
				t.Fatalf("%s: row %d, column %d: %v", path, i+2, j+2, err)
			}
			if j < 2 {
				cov.Set(i, j, v)
			} else {
				y.Set(i, j-2, v)
			}
		}
	}
	return sites, cov, y
}

// TestComBatMatchesSva checks FitComBat and Apply against R's
// sva::ComBat (Bioconductor sva 3.46.0, Debian's r-bioc-sva) on the same
// matrix, sites and model ~ age + sex, parametric (par.prior = TRUE) and
// non-parametric (par.prior = FALSE). The fixture was made by
// testdata/combat/combat_fixture.R; feature f1 is constant within site
// "b", which sva leaves unadjusted, and so must we.
func TestComBatMatchesSva(t *testing.T) {
	sites, cov, y := readComBatTable(t, "testdata/combat/input.csv")
	for _, tc := range []struct {
		method ComBatMethod
		file   string
	}{
		{HarmonizeParametric, "parametric.csv"},
		{HarmonizeNonparametric, "nonparametric.csv"},
	} {
		t.Run(string(tc.method), func(t *testing.T) {
			_, _, want := readComBatTable(t, filepath.Join("testdata/combat", tc.file))
			cb, err := FitComBat(y, sites, cov, tc.method)
			if err != nil {
				t.Fatal(err)
			}
			if len(cb.Left) != 1 || cb.Left[0] != 0 {
				t.Errorf("left unharmonised: %v, want [0] (f1)", cb.Left)
			}
			got, err := cb.Apply(y, sites, cov, false)
			if err != nil {
				t.Fatal(err)
			}
			n, G := want.Dims()
			worst := 0.0
			for i := 0; i < n; i++ {
				for g := 0; g < G; g++ {
					worst = math.Max(worst, math.Abs(got.At(i, g)-want.At(i, g)))
				}
			}
			t.Logf("largest difference from sva::ComBat: %.3g", worst)
			if worst > 1e-8 {
				t.Errorf("largest difference from sva::ComBat %.3g, want at most 1e-8", worst)
			}
		})
	}
}

// TestComBatFixtureReproduces re-runs the R script that made the fixture
// when SKEIN_R is set and R and sva are installed, and checks that it still writes the
// committed tables (to 1e-12, the 17 digits they are written with).
func TestComBatFixtureReproduces(t *testing.T) {
	if os.Getenv("SKEIN_R") == "" {
		t.Skip("set SKEIN_R=1 to re-run testdata/combat/combat_fixture.R with R's sva (about a minute); the committed fixture is checked by TestComBatMatchesSva")
	}
	rscript, err := exec.LookPath("Rscript")
	if err != nil {
		t.Skip("Rscript is not installed (Debian: apt-get install r-bioc-sva); the committed fixture is checked by TestComBatMatchesSva")
	}
	if err := exec.Command(rscript, "-e", "library(sva)").Run(); err != nil {
		t.Skip("R's sva is not installed (Debian: apt-get install r-bioc-sva)")
	}
	dir := t.TempDir()
	script, err := filepath.Abs("testdata/combat/combat_fixture.R")
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(rscript, script)
	cmd.Dir = dir
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("Rscript: %v\n%s", err, out)
	}
	for _, name := range []string{"input.csv", "parametric.csv", "nonparametric.csv"} {
		_, _, want := readComBatTable(t, filepath.Join("testdata/combat", name))
		_, _, got := readComBatTable(t, filepath.Join(dir, name))
		if !mat.EqualApprox(got, want, 1e-12) {
			t.Errorf("%s: R now writes other values than the committed fixture", name)
		}
	}
}

// TestComBatSiteErrors: every bad site is an error naming it.
func TestComBatSiteErrors(t *testing.T) {
	y := mat.NewDense(5, 2, []float64{1, 2, 3, 4, 5, 7, 2, 1, 0, 3})
	cases := []struct {
		name  string
		sites []string
		site  string
	}{
		{"one participant at a site", []string{"a", "a", "b", "b", "c"}, "c"},
		{"one site", []string{"a", "a", "a", "a", "a"}, ""},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			_, err := FitComBat(y, tc.sites, nil, HarmonizeParametric)
			if err == nil {
				t.Fatal("no error")
			}
			var se *SiteError
			if tc.site != "" && (!errors.As(err, &se) || se.Site != tc.site) {
				t.Errorf("error %q does not name site %q", err, tc.site)
			}
		})
	}
	cb, err := FitComBat(y.Slice(0, 4, 0, 2).(*mat.Dense), []string{"a", "a", "b", "b"}, nil, HarmonizeParametric)
	if err != nil {
		t.Fatal(err)
	}
	_, err = cb.Apply(y, []string{"a", "a", "b", "b", "z"}, nil, false)
	var se *SiteError
	if !errors.As(err, &se) || se.Site != "z" || !errors.Is(err, ErrUnseenSite) {
		t.Errorf("unseen site: error %v, want a SiteError naming \"z\"", err)
	}
	if _, err := cb.Apply(y, []string{"a", "a", "b", "b", "z"}, nil, true); err != nil {
		t.Errorf("pooled: %v", err)
	}
}

// TestComBatDamagedEstimates: estimates that do not fit together are an
// error naming the field, never a panic.
func TestComBatDamagedEstimates(t *testing.T) {
	y := mat.NewDense(4, 2, []float64{1, 2, 3, 4, 5, 7, 2, 1})
	sites := []string{"a", "a", "b", "b"}
	for _, tc := range []struct {
		name   string
		damage func(*ComBat)
		want   string
	}{
		{"short mean", func(cb *ComBat) { cb.Mean = cb.Mean[:1] }, "features"},
		{"missing scale row", func(cb *ComBat) { cb.Scale = cb.Scale[:1] }, "scale rows"},
		{"zero scale", func(cb *ComBat) { cb.Scale[1][0] = 0 }, "scale[0]"},
		{"unsorted sites", func(cb *ComBat) { cb.Sites[0], cb.Sites[1] = cb.Sites[1], cb.Sites[0] }, "sorted"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			cb, err := FitComBat(y, sites, nil, HarmonizeParametric)
			if err != nil {
				t.Fatal(err)
			}
			tc.damage(cb)
			if _, err := cb.Apply(y, sites, nil, false); err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want one saying %q", err, tc.want)
			}
		})
	}
}
