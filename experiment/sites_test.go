package experiment

import (
	"context"
	"slices"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

// TestSiteKeys: the site keys of [cohort] and [cv] parse, take their
// defaults, and a bad value is an error naming its key.
func TestSiteKeys(t *testing.T) {
	const head = `
[cohort]
participants = "p.tsv"
targets = ["recall"]
covariates = ["age"]
site = "scanner"
[cohort.functional]
files = "fc/{participant_id}.tsv"
[[model]]
name = "ridge"
[model.ridge]
`
	for _, tc := range []struct {
		name, cv string
		check    func(t *testing.T, e *Experiment)
		err      []string
	}{
		{"harmonize defaults", "[cv]\nstratify_site = true\n[cv.harmonize]\npreserve = [\"age\"]\n", func(t *testing.T, e *Experiment) {
			h := e.CV.Harmonize
			if e.Cohort.Site != "scanner" || h == nil || h.Method != train.HarmonizeParametric || h.UnseenSite != train.UnseenError || !e.CV.StratifySite {
				t.Errorf("got cohort.site %q, cv %+v, harmonize %+v", e.Cohort.Site, e.CV, h)
			}
		}, nil},
		{"leave one site out", "[cv]\nsites_out = 1\n[cv.harmonize]\nmethod = \"nonparametric\"\nunseen_site = \"pooled\"\n", func(t *testing.T, e *Experiment) {
			if e.CV.SitesOut != 1 || e.CV.Harmonize.Method != train.HarmonizeNonparametric {
				t.Errorf("got %+v", e.CV)
			}
		}, nil},
		{"unknown method", "[cv.harmonize]\nmethod = \"bayes\"\n", nil, []string{"cv.harmonize.method", "bayes", "parametric"}},
		{"unknown unseen_site", "[cv.harmonize]\nunseen_site = \"skip\"\n", nil, []string{"cv.harmonize.unseen_site", "pooled"}},
		{"leave-site-out needs pooled", "[cv]\nsites_out = 1\n[cv.harmonize]\n", nil, []string{"cv.harmonize.unseen_site", "pooled"}},
		{"site confound with leave-site-out", "[cv]\nsites_out = 2\nsite_confound = true\n", nil, []string{"cv.site_confound"}},
		{"negative sites_out", "[cv]\nsites_out = -1\n", nil, []string{"cv.sites_out"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			e, err := ParseExperiment([]byte(head + tc.cv))
			if tc.err != nil {
				if err == nil {
					t.Fatal("no error")
				}
				for _, w := range tc.err {
					if !strings.Contains(err.Error(), w) {
						t.Errorf("error %q does not say %s", err, w)
					}
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			tc.check(t, e)
		})
	}
}

// TestMultiSiteRun: a whole run on a multi-site synthetic cohort, with
// ComBat and the site confound in the folds, site-stratified folds and a
// short permutation test: the summary scores each site, metrics.json
// holds the heterogeneity, and the caution names the score the sites
// explain.
func TestMultiSiteRun(t *testing.T) {
	sc, err := synth.Generate(synth.Config{N: 120, P: 10, Seed: 4, Targets: 1, TimePoints: 100})
	if err != nil {
		t.Fatal(err)
	}
	if err := sc.AddSites(synth.Sites{Count: 3, EdgeShift: 0.2, ScoreShift: 1, Seed: 1}); err != nil {
		t.Fatal(err)
	}
	if err := sc.Preprocess(data.Preprocess{}); err != nil {
		t.Fatal(err)
	}
	exp := &Experiment{
		Seed: 3,
		CV: train.CV{Folds: new(4), StratifySite: true, SiteConfound: true, Confounds: []string{"motion"},
			Harmonize: &train.Harmonize{Preserve: []string{"age", "sex"}}},
		Models:      []train.ModelConfig{{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}}},
		Permutation: Permutation{Count: 3},
	}
	exp.SetDefaults()
	r := &train.Runner{Design: exp.Design(), Cohort: sc.Cohort, Jobs: 1}
	res, err := r.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	rep, err := Evaluate(context.Background(), exp, r, res, 0)
	if err != nil {
		t.Fatal(err)
	}
	g := rep.Summary.Groups[0]
	if len(g.Sites) != 3 || g.Heterogeneity == nil || g.Heterogeneity.Sites != 3 {
		t.Fatalf("per-site scores %+v, heterogeneity %+v", g.Sites, g.Heterogeneity)
	}
	if !slices.ContainsFunc(rep.Cautions, func(c string) bool { return strings.Contains(c, "Site and score") && strings.Contains(c, "recall") }) {
		t.Errorf("no site caution among %q", rep.Cautions)
	}
	var md strings.Builder
	if err := rep.Summary.WriteMarkdown(&md); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(md.String(), "r site-A") {
		t.Errorf("summary.md has no per-site table:\n%s", md.String())
	}
}

// TestSiteCautions: the caution appears when the sites explain the score
// (η² ≥ SiteScoreEta2), and not when they do not or there are no sites.
func TestSiteCautions(t *testing.T) {
	cohort := func(sites []string, scores []float64) *data.Cohort {
		c := &data.Cohort{Targets: []string{"recall"}}
		for i, s := range scores {
			c.Participants = append(c.Participants, &data.Participant{ID: string(rune('a' + i)), Site: sites[i], Scores: []float64{s}})
		}
		return c
	}
	sites := []string{"x", "x", "x", "y", "y", "y"}
	for _, tc := range []struct {
		name   string
		c      *data.Cohort
		warned bool
	}{
		{"sites explain the score", cohort(sites, []float64{1, 2, 3, 7, 8, 9}), true},
		{"sites do not", cohort(sites, []float64{1, 9, 5, 2, 8, 5}), false},
		{"no sites", cohort(make([]string, 6), []float64{1, 2, 3, 7, 8, 9}), false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := len(siteCautions(tc.c)) > 0; got != tc.warned {
				t.Errorf("caution %v, want %v", got, tc.warned)
			}
		})
	}
}
