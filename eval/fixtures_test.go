package eval

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// The reference values in ../testdata/eval/fixtures.json are made by
// ../testdata/eval/make_fixtures.py with Debian's numpy 1.24, scipy 1.10 and
// scikit-learn 1.2; each test names the function that made its values.

// fnum is a float64 read from JSON, where null stands for NaN.
type fnum float64

func (f *fnum) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*f = fnum(math.NaN())
		return nil
	}
	var v float64
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	*f = fnum(v)
	return nil
}

func floats(fs []fnum) []float64 {
	out := make([]float64, len(fs))
	for i, f := range fs {
		out[i] = float64(f)
	}
	return out
}

type refMetrics struct {
	N        int  `json:"n"`
	Missing  int  `json:"missing"`
	Repeat   int  `json:"repeat"`
	Fold     int  `json:"fold"`
	Within   fnum `json:"pearson_r_within"`
	Pearson  fnum `json:"pearson_r"`
	Spearman fnum `json:"spearman_rho"`
	MAE      fnum `json:"mae"`
	MedianAE fnum `json:"median_ae"`
	RMSE     fnum `json:"rmse"`
	R2       fnum `json:"r2"`
	NMI      fnum `json:"nmi"`
	AMI      fnum `json:"ami"`
	// NMIChance is absent (so 0) from fold_mean and fold_sd, which hold
	// metrics only.
	NMIChance fnum `json:"nmi_chance"`
}

func (r refMetrics) values() Values {
	return Values{
		PearsonWithin: float64(r.Within), Pearson: float64(r.Pearson), Spearman: float64(r.Spearman), MAE: float64(r.MAE),
		MedianAE: float64(r.MedianAE), RMSE: float64(r.RMSE), R2: float64(r.R2), NMI: float64(r.NMI),
		AMI: float64(r.AMI),
	}
}

type fixtures struct {
	Metrics []struct {
		Name      string     `json:"name"`
		Bins      int        `json:"bins"`
		Observed  []fnum     `json:"observed"`
		Predicted []fnum     `json:"predicted"`
		Want      refMetrics `json:"want"`
	} `json:"metrics"`
	Binning []struct {
		X    []float64 `json:"x"`
		Bins int       `json:"bins"`
		Want []int     `json:"want"`
	} `json:"binning"`
	AMI []struct {
		Name       string  `json:"name"`
		A          []int   `json:"a"`
		B          []int   `json:"b"`
		AMISklearn float64 `json:"ami_sklearn"`
		AMI        float64 `json:"ami"`
		NMI        float64 `json:"nmi"`
		EMISklearn float64 `json:"emi_sklearn"`
		EMIMpmath  *fnum   `json:"emi_mpmath"`
		NMIChance  float64 `json:"nmi_chance"`
		// Monte Carlo mean NMI over random pairings and its standard
		// error; absent for most cases.
		NMIChanceMC   *fnum `json:"nmi_chance_monte_carlo"`
		NMIChanceMCSE *fnum `json:"nmi_chance_monte_carlo_se"`
	} `json:"ami"`
	Anscombe []struct {
		Set     string    `json:"set"`
		X       []float64 `json:"x"`
		Y       []float64 `json:"y"`
		Pearson float64   `json:"pearson_r"`
	} `json:"anscombe"`
	IIRNMI struct {
		Clusters   []int   `json:"clusters"`
		Classes    []int   `json:"classes"`
		NMISklearn float64 `json:"nmi_sklearn"`
	} `json:"iir_nmi"`
	TTest []struct {
		Name   string    `json:"name"`
		Diff   []float64 `json:"diff"`
		NTrain float64   `json:"n_train"`
		NTest  float64   `json:"n_test"`
		Mean   float64   `json:"mean"`
		T      float64   `json:"t"`
		DF     float64   `json:"df"`
		P      float64   `json:"p"`
	} `json:"ttest"`
	KS []struct {
		Name string    `json:"name"`
		X    []float64 `json:"x"`
		D    float64   `json:"d"`
		P    float64   `json:"p_asymptotic"`
	} `json:"ks"`
	Kolmogorov []struct {
		Lambda   float64 `json:"lambda"`
		Survival float64 `json:"survival"`
	} `json:"kolmogorov"`
	PredictionsSummary []struct {
		Model    string       `json:"model"`
		Target   string       `json:"target"`
		Pooled   refMetrics   `json:"pooled"`
		Folds    []refMetrics `json:"folds"`
		FoldMean refMetrics   `json:"fold_mean"`
		FoldSD   refMetrics   `json:"fold_sd"`
	} `json:"predictions_summary"`
}

func loadFixtures(t *testing.T) *fixtures {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("..", "testdata", "eval", "fixtures.json"))
	if err != nil {
		t.Fatal(err)
	}
	var f fixtures
	if err := json.Unmarshal(raw, &f); err != nil {
		t.Fatalf("fixtures.json: %v", err)
	}
	return &f
}

// near reports whether got is within tol of want, relative to max(1, |want|);
// two NaNs are close.
func near(got, want, tol float64) bool {
	if math.IsNaN(want) || math.IsNaN(got) {
		return math.IsNaN(want) && math.IsNaN(got)
	}
	return math.Abs(got-want) <= tol*math.Max(1, math.Abs(want))
}

func checkValues(t *testing.T, what string, got, want Values, tol float64) {
	t.Helper()
	for _, m := range Metrics() {
		if !near(got.Get(m), want.Get(m), tol) {
			t.Errorf("%s: %s = %.17g, want %.17g", what, m, got.Get(m), want.Get(m))
		}
	}
}
