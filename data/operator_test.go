package data_test

import (
	"bufio"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// Small graphs whose Laplacian spectra have closed forms.

func pathGraph(n int) *mat.Dense {
	a := mat.NewDense(n, n, nil)
	for i := 0; i+1 < n; i++ {
		a.Set(i, i+1, 1)
		a.Set(i+1, i, 1)
	}
	return a
}

func cycleGraph(n int) *mat.Dense {
	a := pathGraph(n)
	a.Set(0, n-1, 1)
	a.Set(n-1, 0, 1)
	return a
}

func completeGraph(n int) *mat.Dense {
	a := mat.NewDense(n, n, nil)
	a.Apply(func(i, j int, _ float64) float64 {
		if i == j {
			return 0
		}
		return 1
	}, a)
	return a
}

// starGraph has vertex 0 joined to each of the other n − 1.
func starGraph(n int) *mat.Dense {
	a := mat.NewDense(n, n, nil)
	for i := 1; i < n; i++ {
		a.Set(0, i, 1)
		a.Set(i, 0, 1)
	}
	return a
}

// spectrum returns the eigenvalues of the symmetric m, ascending.
func spectrum(t *testing.T, m *mat.Dense) []float64 {
	t.Helper()
	p, _ := m.Dims()
	s := mat.NewSymDense(p, nil)
	for i := range p {
		for j := i; j < p; j++ {
			if math.Abs(m.At(i, j)-m.At(j, i)) > 1e-12 {
				t.Fatalf("operator is not symmetric at %d, %d", i, j)
			}
			s.SetSym(i, j, m.At(i, j))
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(s, false) {
		t.Fatal("eigendecomposition failed")
	}
	return eig.Values(nil)
}

func repeat(v float64, n int) []float64 {
	return slices.Repeat([]float64{v}, n)
}

func closedForm(n int, f func(k int) float64) []float64 {
	v := make([]float64, n)
	for k := range v {
		v[k] = f(k)
	}
	slices.Sort(v)
	return v
}

func sameSpectrum(got, want []float64) bool {
	if len(got) != len(want) {
		return false
	}
	want = slices.Clone(want)
	slices.Sort(want)
	for i := range got {
		if math.Abs(got[i]-want[i]) > 1e-10 {
			return false
		}
	}
	return true
}

// TestLaplacianSpectra checks the spectra of L = D − A and of the normalized
// Laplacian against their closed forms for path, cycle, complete and star
// graphs (handbook facts: Chung 1997, Spectral Graph Theory, §1.2 for the
// normalized Laplacian; the combinatorial ones are the standard
// eigenvalues, e.g. Brouwer & Haemers 2012, Spectra of Graphs, §1.4).
func TestLaplacianSpectra(t *testing.T) {
	const n = 7
	nf := float64(n)
	for _, tc := range []struct {
		name       string
		a          *mat.Dense
		laplacian  []float64
		normalized []float64
	}{
		{"path", pathGraph(n),
			closedForm(n, func(k int) float64 { return 2 - 2*math.Cos(math.Pi*float64(k)/nf) }),
			closedForm(n, func(k int) float64 { return 1 - math.Cos(math.Pi*float64(k)/(nf-1)) })},
		{"cycle", cycleGraph(n),
			closedForm(n, func(k int) float64 { return 2 - 2*math.Cos(2*math.Pi*float64(k)/nf) }),
			closedForm(n, func(k int) float64 { return 1 - math.Cos(2*math.Pi*float64(k)/nf) })},
		{"complete", completeGraph(n),
			append([]float64{0}, repeat(nf, n-1)...),
			append([]float64{0}, repeat(nf/(nf-1), n-1)...)},
		{"star", starGraph(n),
			append(append([]float64{0}, repeat(1, n-2)...), nf),
			append(append([]float64{0}, repeat(1, n-2)...), 2)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			l, err := data.Operator(data.Laplacian, tc.a)
			if err != nil {
				t.Fatal(err)
			}
			if got := spectrum(t, l); !sameSpectrum(got, tc.laplacian) {
				t.Errorf("Laplacian spectrum %v, want %v", got, tc.laplacian)
			}
			ln, err := data.Operator(data.NormalizedLaplacian, tc.a)
			if err != nil {
				t.Fatal(err)
			}
			if got := spectrum(t, ln); !sameSpectrum(got, tc.normalized) {
				t.Errorf("normalized Laplacian spectrum %v, want %v", got, tc.normalized)
			}
		})
	}
}

// TestNormalizedLaplacianBipartite checks that the normalized Laplacian's
// eigenvalues lie in [0, 2] and that 2 is one of them exactly when the
// (connected) graph is bipartite (Chung 1997, Lemma 1.7).
func TestNormalizedLaplacianBipartite(t *testing.T) {
	for _, tc := range []struct {
		name      string
		a         *mat.Dense
		bipartite bool
	}{
		{"even cycle", cycleGraph(6), true},
		{"odd cycle", cycleGraph(7), false},
		{"path", pathGraph(5), true},
		{"star", starGraph(5), true},
		{"complete", completeGraph(4), false},
		{"path with a chord", func() *mat.Dense {
			a := pathGraph(5)
			a.Set(0, 2, 1) // triangle 0-1-2
			a.Set(2, 0, 1)
			return a
		}(), false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ln, err := data.Operator(data.NormalizedLaplacian, tc.a)
			if err != nil {
				t.Fatal(err)
			}
			values := spectrum(t, ln)
			if values[0] < -1e-12 || values[len(values)-1] > 2+1e-12 {
				t.Errorf("eigenvalues %v leave [0, 2]", values)
			}
			hasTwo := math.Abs(values[len(values)-1]-2) < 1e-10
			if hasTwo != tc.bipartite {
				t.Errorf("largest eigenvalue %v; bipartite = %v", values[len(values)-1], tc.bipartite)
			}
		})
	}
}

// TestIsolatedRegion checks that a region without edges gives finite
// operators, with D^-1/2 = 0 there: the normalized Laplacian of a path on 3
// regions plus an isolated one has the path's spectrum {0, 1, 2} (Chung
// 1997) plus 1 for the isolated region (skein's convention).
func TestIsolatedRegion(t *testing.T) {
	a := mat.NewDense(4, 4, nil)
	a.Slice(0, 3, 0, 3).(*mat.Dense).Copy(pathGraph(3))
	for _, kind := range data.OperatorKinds() {
		op, err := data.Operator(kind, a)
		if err != nil {
			t.Fatalf("%s: %v", kind, err)
		}
		for _, v := range op.RawMatrix().Data {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("%s: non-finite value in\n%v", kind, mat.Formatted(op))
			}
		}
		if kind == data.ScaledLaplacian {
			empty, err := data.Operator(kind, mat.NewDense(3, 3, nil))
			if err != nil || !mat.Equal(empty, mat.NewDense(3, 3, []float64{1, 0, 0, 0, 1, 0, 0, 0, 1})) {
				t.Errorf("scaled Laplacian of a graph without edges: got %v, %v; want I", empty, err)
			}
		}
		if kind == data.NormalizedLaplacian {
			if got, want := spectrum(t, op), []float64{0, 1, 1, 2}; !sameSpectrum(got, want) {
				t.Errorf("spectrum %v, want %v", got, want)
			}
		}
	}
}

// TestRenormalizedAndScaled checks closed forms: the renormalized adjacency
// of K_n is J/n (eigenvalues 1 and 0), and the scaled Laplacian of a path,
// whose normalized Laplacian has λmax = 2, is −D^-1/2 A D^-1/2 with
// eigenvalues cos(πk/(n−1)) spanning [−1, 1] (Chung 1997).
func TestRenormalizedAndScaled(t *testing.T) {
	const n = 5
	r, err := data.Operator(data.RenormalizedAdjacency, completeGraph(n))
	if err != nil {
		t.Fatal(err)
	}
	for _, v := range r.RawMatrix().Data {
		if math.Abs(v-1.0/n) > 1e-15 {
			t.Fatalf("renormalized adjacency of K_%d: got\n%v\nwant every entry 1/%d", n, mat.Formatted(r), n)
		}
	}
	s, err := data.Operator(data.ScaledLaplacian, pathGraph(n))
	if err != nil {
		t.Fatal(err)
	}
	want := closedForm(n, func(k int) float64 { return math.Cos(math.Pi * float64(k) / (n - 1)) })
	if got := spectrum(t, s); !sameSpectrum(got, want) {
		t.Errorf("scaled Laplacian spectrum %v, want %v", got, want)
	}
}

// TestOperatorsScipy checks every operator of two weighted graphs against
// values from scipy.sparse.csgraph.laplacian and numpy, fixtures made by
// testdata/operators/make.py.
func TestOperatorsScipy(t *testing.T) {
	files := map[data.OperatorKind]string{
		data.Laplacian:             "laplacian",
		data.NormalizedLaplacian:   "normalized",
		data.RenormalizedAdjacency: "renormalized",
		data.ScaledLaplacian:       "scaled",
	}
	for _, suffix := range []string{"", "_isolated"} {
		a := readReferenceMatrix(t, "adjacency"+suffix+".tsv")
		for kind, name := range files {
			want := readReferenceMatrix(t, name+suffix+".tsv")
			got, err := data.Operator(kind, a)
			if err != nil {
				t.Fatalf("%s%s: %v", kind, suffix, err)
			}
			if !mat.EqualApprox(got, want, 1e-12) {
				t.Errorf("%s%s: got\n%v\nwant\n%v", kind, suffix, mat.Formatted(got), mat.Formatted(want))
			}
		}
		id, err := data.Operator(data.Identity, a)
		if err != nil || mat.Trace(id) != 6 || mat.Sum(id) != 6 {
			t.Errorf("identity: got %v, %v", id, err)
		}
	}
}

func readReferenceMatrix(t *testing.T, name string) *mat.Dense {
	t.Helper()
	f, err := os.Open(filepath.Join("..", "testdata", "operators", name))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var values []float64
	rows := 0
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		for _, field := range strings.Split(sc.Text(), "\t") {
			v, err := strconv.ParseFloat(field, 64)
			if err != nil {
				t.Fatalf("%s: %v", name, err)
			}
			values = append(values, v)
		}
		rows++
	}
	return mat.NewDense(rows, len(values)/rows, values)
}

func TestOperatorErrors(t *testing.T) {
	asym := mat.NewDense(2, 2, []float64{0, 1, 2, 0})
	negative := mat.NewDense(2, 2, []float64{0, -1, -1, 0})
	for _, tc := range []struct {
		name     string
		kind     data.OperatorKind
		a        *mat.Dense
		fragment string
	}{
		{"asymmetric", data.Laplacian, asym, "row 1, column 2: weight 1 differs from 2"},
		{"negative", data.NormalizedLaplacian, negative, "row 1, column 2: weight -1 is negative"},
		{"self-loops only", data.ScaledLaplacian, mat.NewDense(2, 2, []float64{1, 0, 0, 1}), "no edge between regions"},
		{"unknown kind", "chebyshev", pathGraph(3), `operator "chebyshev" is not one of "identity", "laplacian"`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := data.Operator(tc.kind, tc.a)
			if err == nil || !strings.Contains(err.Error(), tc.fragment) {
				t.Errorf("got %v, want an error containing %q", err, tc.fragment)
			}
		})
	}
}

func TestParseOperatorKind(t *testing.T) {
	for _, k := range data.OperatorKinds() {
		got, err := data.ParseOperatorKind(string(k))
		if err != nil || got != k {
			t.Errorf("ParseOperatorKind(%q) = %q, %v", k, got, err)
		}
	}
	if _, err := data.ParseOperatorKind("Laplacian"); err == nil {
		t.Error(`ParseOperatorKind("Laplacian"): got no error`)
	}
}
