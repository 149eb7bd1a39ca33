package data_test

import (
	"bufio"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"
	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// TestFisherZTable checks FisherZ against a standard r-to-z table (values
// as printed in common statistics tables, to 4 decimals; quoted from
// memory, and confirmed by the numpy fixture of TestFisherZNumpy).
func TestFisherZTable(t *testing.T) {
	table := []struct{ r, z float64 }{
		{0.10, 0.1003},
		{0.30, 0.3095},
		{0.50, 0.5493},
		{0.70, 0.8673},
		{0.90, 1.4722},
		{0.95, 1.8318},
		{0.99, 2.6467},
	}
	for _, row := range table {
		m := mat.NewDense(1, 2, []float64{row.r, -row.r})
		if err := data.FisherZ(m, data.DefaultClip); err != nil {
			t.Fatal(err)
		}
		if got := m.At(0, 0); math.Abs(got-row.z) > 5e-5 {
			t.Errorf("z(%v) = %.5f, table says %.4f", row.r, got, row.z)
		}
		if got := m.At(0, 1); math.Abs(got+row.z) > 5e-5 {
			t.Errorf("z(%v) = %.5f, table says %.4f", -row.r, got, -row.z)
		}
	}
}

// TestFisherZNumpy checks FisherZ against numpy.arctanh, fixture made by
// testdata/fisherz/make.py.
func TestFisherZNumpy(t *testing.T) {
	f, err := os.Open(filepath.Join("..", "testdata", "fisherz", "fisherz.tsv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	sc.Scan() // header
	rows := 0
	for sc.Scan() {
		fields := strings.Split(sc.Text(), "\t")
		r, err1 := strconv.ParseFloat(fields[0], 64)
		want, err2 := strconv.ParseFloat(fields[1], 64)
		if err := errors.Join(err1, err2); err != nil {
			t.Fatal(err)
		}
		m := mat.NewDense(1, 1, []float64{r})
		if err := data.FisherZ(m, data.DefaultClip); err != nil {
			t.Fatal(err)
		}
		if got := m.At(0, 0); math.Abs(got-want) > 1e-14*math.Max(1, math.Abs(want)) {
			t.Errorf("z(%v) = %.17g, numpy.arctanh gives %.17g", r, got, want)
		}
		rows++
	}
	if rows < 10 {
		t.Fatalf("read %d reference rows, want the whole fixture", rows)
	}
}

func TestFisherZClip(t *testing.T) {
	// atanh(1 − ε) = ½ ln((2 − ε)/ε): the closed form of the clipped value.
	for _, eps := range []float64{1e-7, 1e-3, 0.01} {
		m := mat.NewDense(1, 4, []float64{1, -1, 1 + 1e-6, 1 - eps/2})
		if err := data.FisherZ(m, eps); err != nil {
			t.Fatal(err)
		}
		want := 0.5 * math.Log((2-eps)/eps)
		for j, sign := range []float64{1, -1, 1, 1} {
			if got := m.At(0, j); math.Abs(got-sign*want) > 1e-6*want {
				t.Errorf("ε = %v, entry %d: got %v, want %v", eps, j, got, sign*want)
			}
		}
	}
}

func TestFisherZErrors(t *testing.T) {
	for _, tc := range []struct {
		name     string
		bad      float64
		fragment string
	}{
		{"beyond one", 1.5, "not a correlation"},
		{"nan", math.NaN(), "NaN"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m := mat.NewDense(2, 3, []float64{0.1, 0.2, 0.3, 0.4, 0.5, tc.bad})
			err := data.FisherZ(m, data.DefaultClip)
			var ee *data.EntryError
			if !errors.As(err, &ee) {
				t.Fatalf("got %v, want an *EntryError", err)
			}
			if ee.Row != 2 || ee.Column != 3 || !strings.Contains(err.Error(), tc.fragment) {
				t.Errorf("got %q (row %d, column %d), want row 2, column 3 and %q", err, ee.Row, ee.Column, tc.fragment)
			}
		})
	}
}

// Hand-checkable values: ln(1 + e − 1) = 1, ln 1 = 0, ln(1 + 3) = 2 ln 2.
func TestLog1p(t *testing.T) {
	m := mat.NewDense(1, 3, []float64{math.E - 1, 0, 3})
	if err := data.Log1p(m); err != nil {
		t.Fatal(err)
	}
	want := []float64{1, 0, 2 * math.Ln2}
	for j, w := range want {
		if got := m.At(0, j); math.Abs(got-w) > 1e-15 {
			t.Errorf("entry %d: got %v, want %v", j, got, w)
		}
	}
	bad := mat.NewDense(2, 2, []float64{0, 1, -2, 0})
	var ee *data.EntryError
	if err := data.Log1p(bad); !errors.As(err, &ee) || ee.Row != 2 || ee.Column != 1 {
		t.Errorf("negative count: got %v, want an *EntryError at row 2, column 1", err)
	}
}

func TestScale(t *testing.T) {
	sym := func() *mat.Dense {
		return mat.NewDense(3, 3, []float64{
			0, 2, 4,
			2, 0, 2,
			4, 2, 0,
		})
	}
	for _, tc := range []struct {
		name  string
		scale func(*mat.Dense) error
		want  []float64
	}{
		// Largest entry 4.
		{"max", data.ScaleByMax, []float64{0, 0.5, 1, 0.5, 0, 0.5, 1, 0.5, 0}},
		// Upper triangle 2 + 4 + 2 = 8.
		{"total", data.ScaleByTotal, []float64{0, 0.25, 0.5, 0.25, 0, 0.25, 0.5, 0.25, 0}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m := sym()
			if err := tc.scale(m); err != nil {
				t.Fatal(err)
			}
			if !mat.Equal(m, mat.NewDense(3, 3, tc.want)) {
				t.Errorf("got %v, want %v", mat.Formatted(m), tc.want)
			}
			if err := tc.scale(mat.NewDense(3, 3, nil)); err == nil {
				t.Error("scaling a matrix without edges: got no error")
			}
		})
	}
}

func TestKeepDensity(t *testing.T) {
	// 4 regions, 6 pairs: (0,1)=5 (0,2)=1 (0,3)=3 (1,2)=3 (1,3)=0 (2,3)=2.
	// Pairs (0,3) and (1,2) tie at 3; (0,3) comes first in row-major order.
	in := []float64{
		9, 5, 1, 3,
		5, 9, 3, 0,
		1, 3, 9, 2,
		3, 0, 2, 9,
	}
	for _, tc := range []struct {
		density float64
		want    []float64
	}{
		{1, []float64{0, 5, 1, 3, 5, 0, 3, 0, 1, 3, 0, 2, 3, 0, 2, 0}},
		// round(0.5 · 6) = 3: 5, then the tie at 3 (both fit).
		{0.5, []float64{0, 5, 0, 3, 5, 0, 3, 0, 0, 3, 0, 0, 3, 0, 0, 0}},
		// round(0.3 · 6) = 2: 5 and the first of the tie, (0,3).
		{0.3, []float64{0, 5, 0, 3, 5, 0, 0, 0, 0, 0, 0, 0, 3, 0, 0, 0}},
		// round(0.1 · 6) = 1: the strongest edge only.
		{0.1, []float64{0, 5, 0, 0, 5, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0}},
	} {
		m := mat.NewDense(4, 4, append([]float64(nil), in...))
		data.KeepDensity(m, tc.density)
		if !mat.Equal(m, mat.NewDense(4, 4, tc.want)) {
			t.Errorf("density %v: got\n%v\nwant %v", tc.density, mat.Formatted(m), tc.want)
		}
	}
}

func TestKeepDensityMirrorsUpperTriangle(t *testing.T) {
	m := mat.NewDense(3, 3, []float64{
		0, 1, 2,
		7, 0, 3,
		7, 7, 0,
	})
	data.KeepDensity(m, 1)
	if !mat.Equal(m, mat.NewDense(3, 3, []float64{0, 1, 2, 1, 0, 3, 2, 3, 0})) {
		t.Errorf("got\n%v\nwant the upper triangle mirrored", mat.Formatted(m))
	}
}

func TestPreprocessDefaults(t *testing.T) {
	var p data.Preprocess
	p.SetDefaults()
	if err := p.Validate(); err != nil {
		t.Fatal(err)
	}
	fc := mat.NewDense(2, 2, []float64{1, 0.5, 0.5, 1})
	if err := p.Functional(fc); err != nil {
		t.Fatal(err)
	}
	// Zero diagonal, atanh(0.5) = 0.5493 (standard r-to-z table).
	if fc.At(0, 0) != 0 || math.Abs(fc.At(0, 1)-0.5493) > 5e-5 {
		t.Errorf("functional: got %v", mat.Formatted(fc))
	}
	sc := mat.NewDense(3, 3, []float64{
		10, 3, 0,
		3, 10, 1,
		0, 1, 10,
	})
	if err := p.Structural(sc); err != nil {
		t.Fatal(err)
	}
	// Diagonal zeroed, log1p: ln 4 and ln 2, scaled by the maximum ln 4.
	want := mat.NewDense(3, 3, []float64{0, 1, 0, 1, 0, 0.5, 0, 0.5, 0})
	if !mat.EqualApprox(sc, want, 1e-15) {
		t.Errorf("structural: got\n%v\nwant\n%v", mat.Formatted(sc), mat.Formatted(want))
	}
}

func TestPreprocessNone(t *testing.T) {
	zero := 1.0
	p := data.Preprocess{
		FC: data.FunctionalPreprocess{Transform: "none", Diagonal: "keep"},
		SC: data.StructuralPreprocess{Transform: "none", Scale: "total", Density: &zero},
	}
	p.SetDefaults()
	if err := p.Validate(); err != nil {
		t.Fatal(err)
	}
	fc := mat.NewDense(2, 2, []float64{3, 2, 2, 3}) // already z, not r
	if err := p.Functional(fc); err != nil {
		t.Fatal(err)
	}
	if !mat.Equal(fc, mat.NewDense(2, 2, []float64{3, 2, 2, 3})) {
		t.Errorf("functional with transform none: got %v", mat.Formatted(fc))
	}
	sc := mat.NewDense(2, 2, []float64{5, 4, 4, 5})
	if err := p.Structural(sc); err != nil {
		t.Fatal(err)
	}
	if !mat.Equal(sc, mat.NewDense(2, 2, []float64{0, 1, 1, 0})) {
		t.Errorf("structural scaled by total: got %v", mat.Formatted(sc))
	}
}

func TestPreprocessValidate(t *testing.T) {
	num := func(v float64) *float64 { return &v }
	for _, tc := range []struct {
		name string
		set  func(*data.Preprocess)
		want string
	}{
		{"scale", func(p *data.Preprocess) { p.SC.Scale = "maximum" },
			`preprocess.structural.scale: want "max", "total" or "none", found "maximum"`},
		{"fc transform", func(p *data.Preprocess) { p.FC.Transform = "fisher" },
			`preprocess.functional.transform: want "fisher-z" or "none", found "fisher"`},
		{"diagonal", func(p *data.Preprocess) { p.FC.Diagonal = "one" },
			`preprocess.functional.diagonal: want "zero" or "keep", found "one"`},
		{"sc transform", func(p *data.Preprocess) { p.SC.Transform = "log" },
			`preprocess.structural.transform: want "log1p" or "none", found "log"`},
		{"clip", func(p *data.Preprocess) { p.FC.Clip = num(0) },
			`preprocess.functional.clip: want a number in (0, 0.5), got 0`},
		{"density", func(p *data.Preprocess) { p.SC.Density = num(1.5) },
			`preprocess.structural.density: want a fraction in (0, 1], got 1.5`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var p data.Preprocess
			tc.set(&p)
			p.SetDefaults()
			err := p.Validate()
			if err == nil || err.Error() != tc.want {
				t.Errorf("got %v, want %s", err, tc.want)
			}
		})
	}
}

func TestPreprocessStructuralErrors(t *testing.T) {
	var p data.Preprocess
	p.SetDefaults()
	var ee *data.EntryError
	if err := p.Structural(mat.NewDense(2, 2, []float64{0, math.Inf(1), 1, 0})); !errors.As(err, &ee) || ee.Row != 1 || ee.Column != 2 {
		t.Errorf("infinite count: got %v, want an *EntryError at row 1, column 2", err)
	}
	if err := p.Structural(mat.NewDense(2, 2, nil)); err == nil {
		t.Error("matrix without edges scaled by max: got no error")
	}
}

// TestPreprocessTOML decodes a [preprocess] table the way experiment files
// are read (strict go-toml) and checks that set keys stay and unset keys
// take their defaults.
func TestPreprocessTOML(t *testing.T) {
	text := `
[preprocess.functional]
clip = 1e-5

[preprocess.structural]
scale = "total"
density = 0.2
`
	var file struct {
		Preprocess data.Preprocess `toml:"preprocess"`
	}
	dec := toml.NewDecoder(strings.NewReader(text))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&file); err != nil {
		t.Fatal(err)
	}
	p := file.Preprocess
	p.SetDefaults()
	if err := p.Validate(); err != nil {
		t.Fatal(err)
	}
	if *p.FC.Clip != 1e-5 || p.FC.Transform != "fisher-z" || p.FC.Diagonal != "zero" ||
		p.SC.Scale != "total" || *p.SC.Density != 0.2 || p.SC.Transform != "log1p" {
		t.Errorf("decoded %+v %+v", p.FC, p.SC)
	}
	dec = toml.NewDecoder(strings.NewReader("[preprocess.structural]\nthreshold = 0.2\n"))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&file); err == nil {
		t.Error("unknown key preprocess.structural.threshold: got no error")
	}
}
