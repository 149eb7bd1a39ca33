package train

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/model/linear"
)

// multiSiteCohort is the cohort of the README's multi-site comparison: a
// synthetic cohort (planted ceiling r = 0.4) spread over 4 sites that
// shift every functional edge (SD 0.25 in Fisher z, scale SD 0.2 in logs)
// and the scores (±1 SD between the first and last site); with sites
// false, the same cohort without them.
func multiSiteCohort(t testing.TB, sites bool) *data.Cohort {
	t.Helper()
	sc, err := synth.Generate(synth.Config{N: 240, P: 16, Seed: 3, Targets: 1, Ceiling: 0.4})
	if err != nil {
		t.Fatal(err)
	}
	if sites {
		if err := sc.AddSites(synth.Sites{Count: 4, EdgeShift: 0.25, EdgeScale: 0.2, ScoreShift: 1, Seed: 5}); err != nil {
			t.Fatal(err)
		}
	}
	if err := sc.Preprocess(data.Preprocess{}); err != nil {
		t.Fatal(err)
	}
	return sc.Cohort
}

// sitesPooledR runs ridge under cv on c and returns the Pearson r of its pooled
// test predictions with the observed scores.
func sitesPooledR(t testing.TB, c *data.Cohort, cv CV) float64 {
	t.Helper()
	cv.Folds, cv.Repeats = new(5), new(2)
	d := &Design{Seed: 11, CV: cv, Models: []ModelConfig{{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}}}}
	d.SetDefaults()
	res, err := (&Runner{Design: d, Cohort: c, Jobs: 1}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	var obs, pred []float64
	for _, p := range res.Predictions {
		obs, pred = append(obs, p.Observed), append(pred, p.Predicted)
	}
	return stat.Correlation(obs, pred, nil)
}

// TestMultiSiteInflation: when sites shift both the edges and the scores,
// ridge without harmonisation predicts the scores through the site and
// its r is inflated above that of the same cohort without sites (the true
// effect). With ComBat in the folds the inflation is gone (r falls a
// little below the true effect: the sites' score shifts stay in the scores
// as variance no connectome explains); with the site also regressed out
// of the scores (cv.site_confound), r is back at the true effect. Run with
// -v to print the README's table.
func TestMultiSiteInflation(t *testing.T) {
	if testing.Short() {
		t.Skip("cross-validates ridge 5 times")
	}
	truth := sitesPooledR(t, multiSiteCohort(t, false), CV{})
	multi := multiSiteCohort(t, true)
	harm := &Harmonize{Method: HarmonizeParametric, UnseenSite: UnseenError}
	rows := []struct {
		name string
		cv   CV
	}{
		{"no harmonisation", CV{}},
		{"site confound only", CV{SiteConfound: true, StratifySite: true}},
		{"ComBat in the folds", CV{Harmonize: harm, StratifySite: true}},
		{"ComBat in the folds + site confound", CV{Harmonize: harm, SiteConfound: true, StratifySite: true}},
	}
	r := make([]float64, len(rows))
	t.Logf("%-40s r = %.3f", "no sites (the true effect)", truth)
	for k, row := range rows {
		r[k] = sitesPooledR(t, multi, row.cv)
		t.Logf("%-40s r = %.3f", row.name, r[k])
	}
	if r[0] < truth+0.15 {
		t.Errorf("without harmonisation r = %.3f, want inflated well above the true %.3f", r[0], truth)
	}
	if r[2] > truth+0.05 {
		t.Errorf("with ComBat in the folds r = %.3f, want no inflation above the true %.3f", r[2], truth)
	}
	if math.Abs(r[3]-truth) > 0.08 {
		t.Errorf("with ComBat and the site confound r = %.3f, want near the true %.3f", r[3], truth)
	}
}

// TestHarmonizerLeakage: changing the test participants (their matrices,
// scores and covariates) changes no estimate fitted on the training fold
// and no prediction of the other participants.
func TestHarmonizerLeakage(t *testing.T) {
	c := multiSiteCohort(t, true)
	d := &Design{Seed: 2, CV: CV{Folds: new(4), StratifySite: true, Confounds: []string{"age"}, SiteConfound: true,
		Harmonize: &Harmonize{Method: HarmonizeParametric, Preserve: []string{"age", "sex"}}},
		Models: []ModelConfig{{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}}}}
	d.SetDefaults()
	splits, err := d.CV.folds(d.Seed, c).Splits(len(c.Participants))
	if err != nil {
		t.Fatal(err)
	}
	split := splits[0]
	changed := *c
	changed.Participants = slices.Clone(c.Participants)
	for _, i := range split.Test {
		q := *c.Participants[i]
		q.Functional = mat.DenseCopyOf(q.Functional)
		q.Functional.Scale(0.5, q.Functional)
		q.Scores = []float64{q.Scores[0] + 100}
		q.Covariates = slices.Clone(q.Covariates)
		q.Covariates[0] += 30
		changed.Participants[i] = &q
	}
	fit := func(c *data.Cohort) string {
		ed, ec := withSiteConfound(d, c)
		fd, err := prepareFold(ed, ec, split, 1)
		if err != nil {
			t.Fatal(err)
		}
		raw, err := json.Marshal(fd.prep)
		if err != nil {
			t.Fatal(err)
		}
		return string(raw)
	}
	if a, b := fit(c), fit(&changed); a != b {
		t.Error("changing the test participants changed the estimates fitted on the training fold")
	}
	predictions := func(c *data.Cohort) map[string]float64 {
		res, err := (&Runner{Design: d, Cohort: c, Jobs: 1, splits: splits}).Run(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		out := make(map[string]float64)
		for _, p := range res.Predictions {
			out[fmt.Sprint(p.ParticipantID, p.Repeat, p.Fold)] = p.Predicted
		}
		return out
	}
	before, after := predictions(c), predictions(&changed)
	inTest := make(map[string]bool)
	for _, i := range split.Test {
		inTest[c.Participants[i].ID] = true
	}
	for k, v := range before {
		id := strings.Fields(k)[0]
		fold0 := strings.HasSuffix(k, " 0 0")
		if fold0 && inTest[id] {
			continue // the changed participants themselves
		}
		if fold0 && after[k] != v {
			t.Errorf("%s: prediction changed from %v to %v", k, v, after[k])
		}
	}
}

// TestHarmonizerRoundTrip: a fitted Harmonizer saved as JSON and read
// back gives the same harmonised matrices (what skein predict replays),
// and they stay symmetric.
func TestHarmonizerRoundTrip(t *testing.T) {
	c := multiSiteCohort(t, true)
	h := &Harmonizer{Functional: true, Structural: true, Covariates: []string{"age"}}
	if err := h.Fit(c); err != nil {
		t.Fatal(err)
	}
	raw, err := json.Marshal(&Pipeline{Steps: []Prep{h}})
	if err != nil {
		t.Fatal(err)
	}
	var back Pipeline
	if err := json.Unmarshal(raw, &back); err != nil {
		t.Fatal(err)
	}
	a, err := h.Apply(c)
	if err != nil {
		t.Fatal(err)
	}
	b, err := back.Apply(c)
	if err != nil {
		t.Fatal(err)
	}
	for i := range a.Participants {
		fa, fb := a.Participants[i].Functional, b.Participants[i].Functional
		if !mat.Equal(fa, fb) || !mat.Equal(a.Participants[i].Structural, b.Participants[i].Structural) {
			t.Fatalf("participant %d: the decoded step harmonises otherwise", i)
		}
		if !mat.EqualApprox(fa, fa.T(), 1e-12) {
			t.Fatalf("participant %d: harmonised matrix is not symmetric", i)
		}
	}
}

// TestSiteErrors: every bad site column is an error naming the column and
// the site (or participant).
func TestSiteErrors(t *testing.T) {
	base := func() *data.Cohort {
		c := &data.Cohort{Targets: []string{"recall"}, Covariates: []string{"age"}, Regions: []string{"a", "b", "c"}, SiteColumn: "scanner"}
		for i, s := range []string{"x", "x", "y", "y", "z", "z"} {
			f := mat.NewDense(3, 3, []float64{0, 0.1 * float64(i), 0.2, 0.1 * float64(i), 0, 0.3 * float64(i%3), 0.2, 0.3 * float64(i%3), 0})
			c.Participants = append(c.Participants, &data.Participant{ID: fmt.Sprintf("p%d", i), Site: s, Functional: f,
				Scores: []float64{float64(i)}, Covariates: []float64{20 + float64(i)}})
		}
		return c
	}
	harm := &Harmonize{Method: HarmonizeParametric, UnseenSite: UnseenError}
	cases := []struct {
		name  string
		edit  func(*data.Cohort)
		cv    CV
		split *Split
		want  []string
	}{
		{"missing site", func(c *data.Cohort) { c.Participants[3].Site = "" }, CV{Harmonize: harm}, nil, []string{`cohort.site (column "scanner")`, "p3"}},
		{"one participant at a site", func(c *data.Cohort) { c.Participants[4].Site = "x" }, CV{Harmonize: harm}, nil, []string{`column "scanner"`, `"z"`, "one participant"}},
		{"site in test only", nil, CV{Harmonize: harm}, &Split{Train: []int{0, 1, 2, 3}, Test: []int{4, 5}}, []string{`column "scanner"`, `"z"`, "test fold only"}},
		{"site in test only, confound", nil, CV{SiteConfound: true}, &Split{Train: []int{0, 1, 2, 3}, Test: []int{4, 5}}, []string{`column "scanner"`, `"z"`, "cv.site_confound"}},
		{"preserved target", nil, CV{Harmonize: &Harmonize{Preserve: []string{"recall"}}}, nil, []string{"cv.harmonize.preserve", "recall", "leakage"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			c := base()
			if tc.edit != nil {
				tc.edit(c)
			}
			cv := tc.cv
			cv.SetDefaults()
			var err error
			if tc.split == nil {
				err = cv.checkAgainst(c)
			} else {
				d := &Design{CV: cv}
				ed, ec := withSiteConfound(d, c)
				_, err = prepareFold(ed, ec, *tc.split, 1)
			}
			if err == nil {
				t.Fatal("no error")
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q does not say %s", err, w)
				}
			}
		})
	}
}

// TestSiteFolds: leave-one-site-out holds out each site once; leave-two-
// sites-out makes ⌈S/2⌉ folds of whole sites; site-stratified k-fold puts
// every site in every fold.
func TestSiteFolds(t *testing.T) {
	sites := make([]string, 40)
	for i := range sites {
		sites[i] = string(rune('A' + i%5))
	}
	for _, tc := range []struct {
		name  string
		f     Folds
		folds int
	}{
		{"leave one site out", Folds{Repeats: 1, Sites: sites, SitesOut: 1}, 5},
		{"leave two sites out", Folds{Repeats: 2, Sites: sites, SitesOut: 2, Seed: 3}, 3},
		{"stratified by site", Folds{K: 4, Repeats: 1, Sites: sites, Seed: 3}, 4},
	} {
		t.Run(tc.name, func(t *testing.T) {
			splits, err := tc.f.Splits(len(sites))
			if err != nil {
				t.Fatal(err)
			}
			if got := len(splits) / tc.f.Repeats; got != tc.folds {
				t.Fatalf("%d folds per repeat, want %d", got, tc.folds)
			}
			for _, s := range splits {
				test := map[string]int{}
				train := map[string]bool{}
				for _, i := range s.Test {
					test[sites[i]]++
				}
				for _, i := range s.Train {
					train[sites[i]] = true
				}
				for site, n := range test {
					switch {
					case tc.f.SitesOut > 0 && (train[site] || n != 8):
						t.Errorf("fold %d: site %s is split between training and test", s.Fold, site)
					case tc.f.SitesOut == 0 && (n < 2 || n > 3):
						t.Errorf("fold %d: site %s has %d of its 8 participants in the test fold, want 2 or 3", s.Fold, site, n)
					}
				}
				if tc.f.SitesOut > 0 && len(test) > tc.f.SitesOut {
					t.Errorf("fold %d tests %d sites, want at most %d", s.Fold, len(test), tc.f.SitesOut)
				}
				if tc.f.SitesOut == 0 && len(test) != 5 {
					t.Errorf("fold %d tests %d sites, want all 5", s.Fold, len(test))
				}
			}
		})
	}
}

// TestSavedHarmonizedModel: a fold model saved from a run with ComBat and
// the site confound predicts its test participants, through skein
// predict's path (LoadModel, SavedModel.Predict, participants without
// scores), as the run did; a participant from a site the fold never saw
// is an error naming the site.
func TestSavedHarmonizedModel(t *testing.T) {
	c := multiSiteCohort(t, true)
	dir := t.TempDir()
	d := &Design{Seed: 2, SaveModels: true, CV: CV{Folds: new(4), StratifySite: true, SiteConfound: true,
		Harmonize: &Harmonize{Preserve: []string{"age"}}},
		Models: []ModelConfig{{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}}}}
	d.SetDefaults()
	res, err := (&Runner{Design: d, Cohort: c, Jobs: 1, Models: dir}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	saved, err := LoadModel(filepath.Join(dir, unitPath("ridge", Unit{Repeat: 0, Fold: 0})))
	if err != nil {
		t.Fatal(err)
	}
	if _, ok := saved.Fitted.Prep.Steps[0].(*Harmonizer); !ok {
		t.Fatalf("the saved preparation starts with %s, want combat", saved.Fitted.Prep.Steps[0].Name())
	}
	test := subCohort(c, res.Splits[0].Test)
	for i, p := range test.Participants {
		q := *p
		q.Scores = nil
		test.Participants[i] = &q
	}
	_, residual, err := saved.Predict(test)
	if err != nil {
		t.Fatal(err)
	}
	want := make(map[string]float64)
	for _, p := range res.Predictions {
		if p.Repeat == 0 && p.Fold == 0 {
			want[p.ParticipantID] = p.Predicted
		}
	}
	for i, p := range test.Participants {
		if got := residual.At(i, 0); math.Abs(got-want[p.ID]) > 1e-9 {
			t.Errorf("%s: predicted %v from the saved model, %v in the run", p.ID, got, want[p.ID])
		}
	}
	test.Participants[0].Site = "site-Z"
	if _, _, err := saved.Predict(test); err == nil || !strings.Contains(err.Error(), `"site-Z"`) {
		t.Errorf("unseen site: error %v, want one naming \"site-Z\"", err)
	}
}

// TestLeaveOneSiteOutRun: leave-one-site-out folds with ComBat, each test
// site harmonised as the average training site (unseen_site = "pooled"),
// predict every participant once.
func TestLeaveOneSiteOutRun(t *testing.T) {
	c := multiSiteCohort(t, true)
	d := &Design{Seed: 2, CV: CV{SitesOut: 1, Harmonize: &Harmonize{Method: HarmonizeNonparametric, UnseenSite: UnseenPooled}},
		Models: []ModelConfig{{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}}}}
	d.SetDefaults()
	if err := d.CV.Validate(); err != nil {
		t.Fatal(err)
	}
	res, err := (&Runner{Design: d, Cohort: c, Jobs: 1}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Splits) != 4 || len(res.Predictions) != len(c.Participants) {
		t.Errorf("%d folds and %d predictions, want 4 and %d", len(res.Splits), len(res.Predictions), len(c.Participants))
	}
	d.CV.Harmonize.UnseenSite = UnseenError
	if _, err := (&Runner{Design: d, Cohort: c, Jobs: 1}).Run(context.Background()); err == nil || !strings.Contains(err.Error(), "test fold only") {
		t.Errorf("leave-one-site-out with unseen_site = \"error\": %v, want the site named", err)
	}
}
