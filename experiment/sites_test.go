package experiment

import (
	"strings"
	"testing"

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
