package data

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"codeberg.org/sbinet/npyio"
	"gonum.org/v1/gonum/mat"
)

// seriesFixture is data/connectivity/testdata/estimators.json
// (make_estimators.py beside it: numpy, scipy and scikit-learn from
// Debian's packages): six participants' 40 × 5 series and, per
// participant, numpy.corrcoef, the partial correlation from
// numpy.linalg.inv and sklearn.covariance.ledoit_wolf.
type seriesFixture struct {
	Series      [][][]float64 `json:"series"`
	Correlation [][][]float64 `json:"correlation"`
	Partial     [][][]float64 `json:"partial"`
	LedoitWolf  [][][]float64 `json:"ledoit_wolf"`
}

func readSeriesFixture(t *testing.T) seriesFixture {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("connectivity", "testdata", "estimators.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fx seriesFixture
	if err := json.Unmarshal(raw, &fx); err != nil {
		t.Fatal(err)
	}
	return fx
}

// seriesText writes series x as tab-separated text with a header of the
// given names and, when corner is not "", an index column counting from
// 0 under that corner cell.
func seriesText(x [][]float64, names []string, corner string) string {
	var b strings.Builder
	if corner != "" {
		b.WriteString(corner + "\t")
	}
	b.WriteString(strings.Join(names, "\t") + "\n")
	for t, row := range x {
		if corner != "" {
			fmt.Fprintf(&b, "%d\t", t)
		}
		for j, v := range row {
			if j > 0 {
				b.WriteByte('\t')
			}
			b.WriteString(fmt.Sprint(v))
		}
		b.WriteByte('\n')
	}
	return b.String()
}

var seriesRegions = []string{"V1", "M1", "PCC", "mPFC", "IPS"}

// seriesCohort writes a cohort of the fixture's six participants, s1 to
// s6, with series files in the text form seriesText writes.
func seriesCohort(t *testing.T, fx seriesFixture, corner string) map[string]string {
	t.Helper()
	files := map[string]string{"participants.tsv": "participant_id\tscore\ns1\t1\ns2\t2\ns3\t3\ns4\t4\ns5\t5\ns6\t6\n"}
	for i, x := range fx.Series {
		files[fmt.Sprintf("ts/s%d.tsv", i+1)] = seriesText(x, seriesRegions, corner)
	}
	return files
}

func seriesSource(m Modality) Source {
	m.Series = "ts/{participant_id}.tsv"
	return Source{Participants: "participants.tsv", Targets: []string{"score"}, MinParticipants: new(1), Functional: &m}
}

// TestSeriesEstimators loads the fixture's series with each estimator
// and compares every participant's matrix with numpy.corrcoef, the
// partial correlation from numpy.linalg.inv and
// sklearn.covariance.ledoit_wolf (make_estimators.py).
func TestSeriesEstimators(t *testing.T) {
	fx := readSeriesFixture(t)
	lwCorr := func(i int) [][]float64 {
		c := fx.LedoitWolf[i]
		out := make([][]float64, len(c))
		for a := range c {
			out[a] = make([]float64, len(c))
			for b := range c {
				out[a][b] = c[a][b] / math.Sqrt(c[a][a]*c[b][b])
			}
		}
		return out
	}
	tests := []struct {
		name   string
		mod    Modality
		corner string
		want   func(i int) [][]float64
	}{
		{"correlation, header only", Modality{}, "", func(i int) [][]float64 { return fx.Correlation[i] }},
		{"correlation, corner cell and index column", Modality{Estimator: EstimatorCorrelation}, "Node", func(i int) [][]float64 { return fx.Correlation[i] }},
		{"partial", Modality{Estimator: EstimatorPartial}, "", func(i int) [][]float64 { return fx.Partial[i] }},
		{"Ledoit–Wolf covariance", Modality{Estimator: EstimatorCovariance, Shrinkage: ShrinkageLedoitWolf}, "time", func(i int) [][]float64 { return fx.LedoitWolf[i] }},
		{"Ledoit–Wolf correlation", Modality{Shrinkage: ShrinkageLedoitWolf}, "", lwCorr},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			dir := writeCohort(t, seriesCohort(t, fx, tc.corner))
			c, rep, err := Check(seriesSource(tc.mod), rawValues(), dir)
			if err != nil {
				t.Fatal(err)
			}
			if got := strings.Join(c.Regions, ","); got != strings.Join(seriesRegions, ",") {
				t.Errorf("regions %s", got)
			}
			if c.Series == nil || rep.Functional.TimePoints == nil || rep.Functional.TimePoints.Min != 40 {
				t.Errorf("series settings %+v, time points %+v", c.Series, rep.Functional.TimePoints)
			}
			for i, p := range c.Participants {
				want := tc.want(i)
				for a := range want {
					for b := range want {
						if d := math.Abs(p.Functional.At(a, b) - want[a][b]); d > 1e-10 {
							t.Fatalf("participant %s: entry (%d, %d) = %v, want %v", p.ID, a, b, p.Functional.At(a, b), want[a][b])
						}
					}
				}
			}
		})
	}
}

// TestSeriesNPYAndReordered: a .npy series and a text series whose
// columns come in another order give the same matrix as the text file
// in the cohort's order.
func TestSeriesNPYAndReordered(t *testing.T) {
	fx := readSeriesFixture(t)
	files := seriesCohort(t, fx, "")
	// s2 with its columns reversed
	x := fx.Series[1]
	rev := make([][]float64, len(x))
	for k, row := range x {
		for j := len(row) - 1; j >= 0; j-- {
			rev[k] = append(rev[k], row[j])
		}
	}
	names := []string{"IPS", "mPFC", "PCC", "M1", "V1"}
	files["ts/s2.tsv"] = seriesText(rev, names, "")
	dir := writeCohort(t, files)
	// s3 as .npy, in a second series folder read by another template
	m := mat.NewDense(len(fx.Series[2]), 5, nil)
	for k, row := range fx.Series[2] {
		m.SetRow(k, row)
	}
	var buf bytes.Buffer
	if err := npyio.Write(&buf, m); err != nil {
		t.Fatal(err)
	}
	npyPath := filepath.Join(dir, "s3.npy")
	if err := os.WriteFile(npyPath, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	c, _, err := Check(seriesSource(Modality{}), rawValues(), dir)
	if err != nil {
		t.Fatal(err)
	}
	for a := range 5 {
		for b := range 5 {
			if d := math.Abs(c.Participants[1].Functional.At(a, b) - fx.Correlation[1][a][b]); d > 1e-12 {
				t.Fatalf("reordered columns: entry (%d, %d) = %v, numpy.corrcoef %v", a, b, c.Participants[1].Functional.At(a, b), fx.Correlation[1][a][b])
			}
		}
	}
	got, names2, err := ReadSeries(npyPath, "")
	if err != nil || names2 != nil || !mat.Equal(got, m) {
		t.Fatalf(".npy series: %v, names %v", err, names2)
	}
}

// TestSeriesChecks: every problem of a series file is an error naming
// the file and its place; T differing between participants is reported.
func TestSeriesChecks(t *testing.T) {
	fx := readSeriesFixture(t)
	tests := []struct {
		name string
		edit func(files map[string]string, m *Modality)
		want []string // parts of the error; none: no error
	}{
		{"NaN in a text file", func(f map[string]string, m *Modality) {
			f["ts/s4.tsv"] = replaceCell(f["ts/s4.tsv"], 2, 1, "NaN")
		}, []string{"s4.tsv", "line 2, column 1", `"NaN"`, `region "V1"`, "finite"}},
		{"constant region", func(f map[string]string, m *Modality) {
			x := cloneSeries(fx.Series[2])
			for k := range x {
				x[k][3] = 0.5
			}
			f["ts/s3.tsv"] = seriesText(x, seriesRegions, "")
		}, []string{"s3.tsv", `column 4 (region "mPFC") is constant`, "40 time points"}},
		{"region missing", func(f map[string]string, m *Modality) {
			x := fx.Series[4]
			short := make([][]float64, len(x))
			for k := range x {
				short[k] = x[k][:4]
			}
			f["ts/s5.tsv"] = seriesText(short, seriesRegions[:4], "")
		}, []string{"s5.tsv", `region "IPS" of header of`, "is missing"}},
		{"region renamed", func(f map[string]string, m *Modality) {
			f["ts/s5.tsv"] = strings.Replace(f["ts/s5.tsv"], "PCC", "PCC_L", 1)
		}, []string{"s5.tsv", `region "PCC"`, "missing", `the file has "PCC_L" instead`}},
		{"too few time points, partial", func(f map[string]string, m *Modality) {
			m.Estimator = EstimatorPartial
			f["ts/s6.tsv"] = seriesText(fx.Series[5][:5], seriesRegions, "")
		}, []string{"s6.tsv", "5 time points for 5 regions", "singular", `shrinkage = "ledoit_wolf"`}},
		{"too few time points, tangent", func(f map[string]string, m *Modality) {
			m.Estimator = EstimatorTangent
			f["ts/s6.tsv"] = seriesText(fx.Series[5][:4], seriesRegions, "")
		}, []string{"s6.tsv", "4 time points for 5 regions", `shrinkage = "ledoit_wolf"`}},
		{"too few time points, shrunk", func(f map[string]string, m *Modality) {
			m.Estimator, m.Shrinkage = EstimatorTangent, ShrinkageLedoitWolf
			f["ts/s6.tsv"] = seriesText(fx.Series[5][:4], seriesRegions, "")
		}, nil},
		{"not a number", func(f map[string]string, m *Modality) {
			f["ts/s1.tsv"] = replaceCell(f["ts/s1.tsv"], 7, 3, "abc")
		}, []string{"s1.tsv", "line 7, column 3", `"abc" is not a number`}},
		{"ragged", func(f map[string]string, m *Modality) {
			f["ts/s1.tsv"] += "1\t2\n"
		}, []string{"s1.tsv", "line 42", "found 2 fields, expected 5"}},
		{"series with files", func(f map[string]string, m *Modality) { m.Files = "fc/{participant_id}.tsv" }, []string{"cohort.functional", `one of "files", "stack" or "series"`}},
		{"tangent_mean without tangent", func(f map[string]string, m *Modality) { m.TangentMean = TangentLogEuclidean }, []string{"tangent_mean", `estimator = "tangent"`}},
		{"unknown estimator", func(f map[string]string, m *Modality) { m.Estimator = "precision" }, []string{"cohort.functional.estimator", `"precision"`}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			files := seriesCohort(t, fx, "")
			var m Modality
			tc.edit(files, &m)
			dir := writeCohort(t, files)
			_, _, err := Check(seriesSource(m), rawValues(), dir)
			if tc.want == nil {
				if err != nil {
					t.Fatal(err)
				}
				return
			}
			if err == nil {
				t.Fatal("no error")
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q does not say %q", err, w)
				}
			}
			if strings.Contains(tc.want[0], ".tsv") && !errors.Is(err, ErrBadFile) {
				t.Errorf("error %v is not ErrBadFile", err)
			}
		})
	}
}

// replaceCell replaces the cell of tab-separated text at 1-based line and
// column by v.
func replaceCell(text string, line, column int, v string) string {
	lines := strings.Split(text, "\n")
	cells := strings.Split(lines[line-1], "\t")
	cells[column-1] = v
	lines[line-1] = strings.Join(cells, "\t")
	return strings.Join(lines, "\n")
}

func cloneSeries(x [][]float64) [][]float64 {
	out := make([][]float64, len(x))
	for k := range x {
		out[k] = append([]float64(nil), x[k]...)
	}
	return out
}

// TestSeriesTimePointsDiffer: participants with different T are kept,
// and the check's text says T differs.
func TestSeriesTimePointsDiffer(t *testing.T) {
	fx := readSeriesFixture(t)
	files := seriesCohort(t, fx, "")
	files["ts/s2.tsv"] = seriesText(fx.Series[1][:30], seriesRegions, "")
	dir := writeCohort(t, files)
	_, rep, err := Check(seriesSource(Modality{}), rawValues(), dir)
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	if err := rep.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	if tp := rep.Functional.TimePoints; tp.Min != 30 || tp.Max != 40 || !strings.Contains(b.String(), "time points T: 30 to 40") || !strings.Contains(b.String(), "differs between participants (allowed)") {
		t.Errorf("time points %+v; report:\n%s", tp, b.String())
	}
}

// FuzzParseSeriesText: no input makes the series parser panic, and what
// it accepts is a finite T × p matrix with p names or none.
func FuzzParseSeriesText(f *testing.F) {
	f.Add([]byte("a\tb\n1\t2\n3\t4\n"))
	f.Add([]byte("Node,a,b\n0,1,2\n1,3,4\n"))
	f.Add([]byte("t1 1 2\nt2 3 4\n"))
	f.Add([]byte("a\tb\n1\tNaN\n"))
	f.Add([]byte("\ufeff\n\n"))
	f.Fuzz(func(t *testing.T, raw []byte) {
		x, names, err := parseSeriesText("fuzz.tsv", raw)
		if err != nil {
			if !errors.Is(err, ErrBadFile) {
				t.Fatalf("error %v is not a FileError", err)
			}
			return
		}
		T, p := x.Dims()
		if T == 0 || p == 0 || (names != nil && len(names) != p) {
			t.Fatalf("%d × %d matrix with %d names", T, p, len(names))
		}
		for _, v := range x.RawMatrix().Data {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("accepted %v", v)
			}
		}
	})
}
