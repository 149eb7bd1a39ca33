package eval

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"
)

// TestSiteHeterogeneity checks Cochran's Q, its p-value, I², the SD of r
// and the pooled r against values computed with numpy 1.24 and scipy 1.10
// (Debian's python3-numpy, python3-scipy):
//
//	z = np.arctanh(r); w = n - 3; zb = (w*z).sum()/w.sum()
//	Q = (w*(z-zb)**2).sum(); p = stats.chi2.sf(Q, len(r)-1)
//	I2 = max(0, (Q-df)/Q); sd = np.std(r, ddof=1); pooled = np.tanh(zb)
func TestSiteHeterogeneity(t *testing.T) {
	for _, tc := range []struct {
		name                 string
		r                    []float64
		n                    []int
		q, p, i2, sd, pooled float64
	}{
		{"homogeneous", []float64{0.31, 0.12, 0.45, 0.22}, []int{40, 55, 33, 61},
			2.7369067627912615, 0.4339917681734481, 0, 0.140118997046558, 0.2523046617691853},
		{"heterogeneous", []float64{0.05, 0.6, 0.3, -0.1}, []int{80, 70, 60, 90},
			26.547775006806617, 7.323172184759547e-06, 0.8869961795581428, 0.306526235962492, 0.20273357119771795},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var sites []SiteScores
			for k, r := range tc.r {
				s := SiteScores{Site: string(rune('A' + k)), Participants: tc.n[k]}
				s.Set(MetricPearson, r)
				sites = append(sites, s)
			}
			h := SiteHeterogeneity(sites)
			for _, c := range []struct {
				name      string
				got, want float64
			}{{"Q", h.Q, tc.q}, {"p", h.P, tc.p}, {"I²", h.I2, tc.i2}, {"SD", h.SD, tc.sd}, {"pooled r", h.Pooled, tc.pooled}} {
				if math.Abs(c.got-c.want) > 1e-9*math.Max(1, math.Abs(c.want)) {
					t.Errorf("%s = %v, want %v", c.name, c.got, c.want)
				}
			}
			if h.DF != len(tc.r)-1 || h.Sites != len(tc.r) {
				t.Errorf("df %d over %d sites, want %d over %d", h.DF, h.Sites, len(tc.r)-1, len(tc.r))
			}
		})
	}
	if h := SiteHeterogeneity(nil); !math.IsNaN(h.Q) || !math.IsNaN(h.I2) {
		t.Errorf("no sites: %+v, want NaN", h)
	}
}

// TestEtaSquared checks η² against numpy 1.24 on y = [3,4,5,7,8,9,1,2,2.5]
// in three groups of three: SS_between/SS_total = 0.9191304347826086
// (scipy.stats.f_oneway gives F = 34.0968 on the same data, and
// η² = F·df_b/(F·df_b + df_w) = 0.91913).
func TestEtaSquared(t *testing.T) {
	y := []float64{3, 4, 5, 7, 8, 9, 1, 2, 2.5, math.NaN()}
	g := []string{"a", "a", "a", "b", "b", "b", "c", "c", "c", "c"}
	if got := EtaSquared(y, g); math.Abs(got-0.9191304347826086) > 1e-12 {
		t.Errorf("η² = %v, want 0.9191304347826086", got)
	}
}

// TestSummarySitesJSON: the per-site scores and heterogeneity go into
// metrics.json and come back, and summary.md shows them.
func TestSummarySitesJSON(t *testing.T) {
	var rows []Prediction
	sites := map[string]string{}
	for i := 0; i < 40; i++ {
		id := string(rune('a'+i%26)) + string(rune('a'+i/26))
		sites[id] = []string{"north", "south"}[i%2]
		obs := float64(i % 7)
		rows = append(rows, Prediction{ParticipantID: id, Model: "ridge", Target: "recall", Fold: i % 4, Observed: obs, Predicted: obs + float64(i%3)})
	}
	s := Summarize(rows, 4, true)
	s.AddSites(rows, sites)
	g := s.Groups[0]
	if len(g.Sites) != 2 || g.Sites[0].Site != "north" || g.Sites[0].Participants != 20 || g.Heterogeneity == nil {
		t.Fatalf("sites %+v, heterogeneity %v", g.Sites, g.Heterogeneity)
	}
	var buf bytes.Buffer
	if err := s.WriteJSON(&buf); err != nil {
		t.Fatal(err)
	}
	var back Summary
	if err := json.Unmarshal(buf.Bytes(), &back); err != nil {
		t.Fatal(err)
	}
	bg := back.Groups[0]
	if len(bg.Sites) != 2 || bg.Sites[1].Get(MetricPearson) != g.Sites[1].Get(MetricPearson) || bg.Heterogeneity.Q != g.Heterogeneity.Q {
		t.Errorf("read back %+v, %+v", bg.Sites, bg.Heterogeneity)
	}
	var md strings.Builder
	if err := s.WriteMarkdown(&md); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"### Per site", "r north", "Cochran", "I²"} {
		if !strings.Contains(md.String(), want) {
			t.Errorf("summary.md lacks %q", want)
		}
	}
}
