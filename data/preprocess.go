package data

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/internal/enum"
)

// Preprocess says how each participant's matrices are transformed after
// loading: the [preprocess] table of an experiment file. Every step works on
// one participant's matrix alone, so none can leak across folds.
//
// In an experiment file, with every key at its default:
//
//	[preprocess.functional]
//	transform = "fisher-z"   # "fisher-z" or "none"
//	clip = 1e-7              # ε: |r| ≥ 1 − ε is clipped to ±(1 − ε) before atanh
//	diagonal = "zero"        # "zero" or "keep"
//
//	[preprocess.structural]
//	transform = "log1p"      # "log1p" or "none"
//	scale = "max"            # "max", "total" or "none"
//	density = 1.0            # fraction of the strongest edges kept, in (0, 1]
type Preprocess struct {
	// FC is the [preprocess.functional] table.
	FC FunctionalPreprocess `toml:"functional"`
	// SC is the [preprocess.structural] table.
	SC StructuralPreprocess `toml:"structural"`
}

// FunctionalTransform is the value of the key preprocess.functional.transform:
// FisherZTransform or NoTransform ("" is unset).
type FunctionalTransform string

// StructuralTransform is the value of the key preprocess.structural.transform:
// Log1pTransform or NoTransform ("" is unset).
type StructuralTransform string

// Transforms of preprocess.functional.transform and
// preprocess.structural.transform.
const (
	FisherZTransform FunctionalTransform = "fisher-z" // z = atanh r
	Log1pTransform   StructuralTransform = "log1p"    // w = ln(1 + count)
	// NoTransform uses the values as they are; it is a value of both
	// transform keys.
	NoTransform = "none"
)

// Diagonal is the value of the key preprocess.functional.diagonal:
// ZeroDiagonalSetting or KeepDiagonalSetting ("" is unset).
type Diagonal string

// Diagonal settings of the key preprocess.functional.diagonal.
const (
	ZeroDiagonalSetting Diagonal = "zero" // the diagonal is set to 0
	KeepDiagonalSetting Diagonal = "keep" // the diagonal is transformed like any entry
)

// Scaling is the value of the key preprocess.structural.scale: ScaleMax,
// ScaleTotal or ScaleNone ("" is unset).
type Scaling string

// Scalings of the key preprocess.structural.scale.
const (
	ScaleMax   Scaling = "max"   // divide by the largest entry
	ScaleTotal Scaling = "total" // divide by the total edge weight (upper triangle)
	ScaleNone  Scaling = "none"  // no scaling
)

// UnmarshalText sets t to the word text: "fisher-z", "none" or "" (unset).
// Another word is an error listing these.
func (t *FunctionalTransform) UnmarshalText(text []byte) error {
	return enum.Parse(t, text, FisherZTransform, NoTransform)
}

// MarshalText returns the word of t.
func (t FunctionalTransform) MarshalText() ([]byte, error) { return []byte(t), nil }

// String returns the word of t.
func (t FunctionalTransform) String() string { return string(t) }

// UnmarshalText sets t to the word text: "log1p", "none" or "" (unset).
// Another word is an error listing these.
func (t *StructuralTransform) UnmarshalText(text []byte) error {
	return enum.Parse(t, text, Log1pTransform, NoTransform)
}

// MarshalText returns the word of t.
func (t StructuralTransform) MarshalText() ([]byte, error) { return []byte(t), nil }

// String returns the word of t.
func (t StructuralTransform) String() string { return string(t) }

// UnmarshalText sets d to the word text: "zero", "keep" or "" (unset).
// Another word is an error listing these.
func (d *Diagonal) UnmarshalText(text []byte) error {
	return enum.Parse(d, text, ZeroDiagonalSetting, KeepDiagonalSetting)
}

// MarshalText returns the word of d.
func (d Diagonal) MarshalText() ([]byte, error) { return []byte(d), nil }

// String returns the word of d.
func (d Diagonal) String() string { return string(d) }

// UnmarshalText sets s to the word text: "max", "total", "none" or ""
// (unset). Another word is an error listing these.
func (s *Scaling) UnmarshalText(text []byte) error {
	return enum.Parse(s, text, ScaleMax, ScaleTotal, ScaleNone)
}

// MarshalText returns the word of s.
func (s Scaling) MarshalText() ([]byte, error) { return []byte(s), nil }

// String returns the word of s.
func (s Scaling) String() string { return string(s) }

// DefaultClip is the default ε of preprocess.functional.clip.
const DefaultClip = 1e-7

// correlationSlack is how far beyond ±1 a functional entry may be and still
// count as a correlation that rounding pushed past 1 (float32 pipelines
// write 1.0000001). Common practice, no source.
const correlationSlack = 1e-5

// FunctionalPreprocess is the [preprocess.functional] table: the steps
// applied to each functional (correlation) matrix, in this order: Fisher z
// (with clipping), then the diagonal.
type FunctionalPreprocess struct {
	// Transform is "fisher-z" (default) or "none".
	Transform FunctionalTransform `toml:"transform"`
	// Clip is ε of FisherZ: entries with |r| ≥ 1 − ε are set to ±(1 − ε)
	// before atanh, so the unit diagonal and rounding errors give finite
	// values (atanh(1 − 1e-7) ≈ 8.35). Default 1e-7; must lie in (0, 0.5).
	// Only used by "fisher-z".
	Clip *float64 `toml:"clip"`
	// Diagonal is "zero" (default: the diagonal is set to 0 after the
	// transform) or "keep".
	Diagonal Diagonal `toml:"diagonal"`
}

// StructuralPreprocess is the [preprocess.structural] table: the steps
// applied to each structural (streamline count) matrix, in this order:
// the diagonal is set to 0, the transform, the density threshold, then the
// scaling (so "total" is the total of the edges kept).
type StructuralPreprocess struct {
	// Transform is "log1p" (default: w = ln(1 + count)) or "none".
	Transform StructuralTransform `toml:"transform"`
	// Scale is "max" (default: divide by the largest entry, so weights lie
	// in [0, 1]), "total" (divide by the sum of the upper triangle, the
	// total edge weight counting each edge once) or "none".
	Scale Scaling `toml:"scale"`
	// Density is the fraction of the p(p−1)/2 region pairs kept as edges,
	// the strongest first (see KeepDensity); in (0, 1], default 1 (all).
	Density *float64 `toml:"density"`
}

// SetDefaults fills every unset field with its documented default.
func (p *Preprocess) SetDefaults() {
	if p.FC.Transform == "" {
		p.FC.Transform = FisherZTransform
	}
	if p.FC.Clip == nil {
		clip := DefaultClip
		p.FC.Clip = &clip
	}
	if p.FC.Diagonal == "" {
		p.FC.Diagonal = ZeroDiagonalSetting
	}
	if p.SC.Transform == "" {
		p.SC.Transform = Log1pTransform
	}
	if p.SC.Scale == "" {
		p.SC.Scale = ScaleMax
	}
	if p.SC.Density == nil {
		density := 1.0
		p.SC.Density = &density
	}
}

// Validate reports the first setting that cannot work, naming its key.
// It expects SetDefaults to have been called.
func (p Preprocess) Validate() error {
	if err := enum.Check(p.FC.Transform); err != nil {
		return fmt.Errorf("preprocess.functional.transform: %w", err)
	}
	if p.FC.Clip == nil || !(*p.FC.Clip > 0 && *p.FC.Clip < 0.5) {
		return fmt.Errorf("preprocess.functional.clip: want a number in (0, 0.5), got %s", optionalNumber(p.FC.Clip))
	}
	if err := enum.Check(p.FC.Diagonal); err != nil {
		return fmt.Errorf("preprocess.functional.diagonal: %w", err)
	}
	if err := enum.Check(p.SC.Transform); err != nil {
		return fmt.Errorf("preprocess.structural.transform: %w", err)
	}
	if err := enum.Check(p.SC.Scale); err != nil {
		return fmt.Errorf("preprocess.structural.scale: %w", err)
	}
	if p.SC.Density == nil || !(*p.SC.Density > 0 && *p.SC.Density <= 1) {
		return fmt.Errorf("preprocess.structural.density: want a fraction in (0, 1], got %s", optionalNumber(p.SC.Density))
	}
	return nil
}

func optionalNumber(v *float64) string {
	if v == nil {
		return "nothing"
	}
	return fmt.Sprint(*v)
}

// Functional transforms a p × p functional matrix in place: Fisher z (when
// Transform is "fisher-z") and then the diagonal. It expects SetDefaults to
// have been called. A non-finite entry, or under "fisher-z" an entry with
// |r| beyond 1 (see FisherZ), is an *EntryError; m is then left partly
// transformed.
func (p Preprocess) Functional(m *mat.Dense) error {
	mustSquare("Functional", m)
	if p.FC.Transform == FisherZTransform {
		if err := FisherZ(m, *p.FC.Clip); err != nil {
			return err
		}
	} else if err := checkFinite(m); err != nil {
		return err
	}
	if p.FC.Diagonal == ZeroDiagonalSetting {
		ZeroDiagonal(m)
	}
	return nil
}

// Structural transforms a p × p structural matrix in place: zero diagonal,
// log1p (when Transform is "log1p"), the density threshold and the scaling.
// It expects SetDefaults to have been called. A negative or non-finite
// entry, or a matrix without any edge when scaling, is an error; m is then
// left partly transformed.
func (p Preprocess) Structural(m *mat.Dense) error {
	mustSquare("Structural", m)
	if err := checkFinite(m); err != nil {
		return err
	}
	ZeroDiagonal(m)
	if p.SC.Transform == Log1pTransform {
		if err := Log1p(m); err != nil {
			return err
		}
	}
	if *p.SC.Density < 1 {
		KeepDensity(m, *p.SC.Density)
	}
	switch p.SC.Scale {
	case ScaleMax:
		return ScaleByMax(m)
	case ScaleTotal:
		return ScaleByTotal(m)
	}
	return nil
}

// EntryError is a bad entry of a matrix, at 1-based Row and Column.
type EntryError struct {
	Row, Column int
	Err         error
}

func (e *EntryError) Error() string {
	return fmt.Sprintf("row %d, column %d: %v", e.Row, e.Column, e.Err)
}

func (e *EntryError) Unwrap() error { return e.Err }

// FisherZ replaces every entry r of m, the diagonal included, by its Fisher
// z transform
//
//	z = atanh r = ½ ln((1 + r) / (1 − r)),
//
// after clipping r to [−(1 − clip), 1 − clip], so that |r| = 1 (the unit
// diagonal, or perfectly correlated regions) gives ±atanh(1 − clip) instead
// of ±Inf. An entry with |r| > 1 + 1e-5 is not a correlation and a NaN is
// not a number: both are an *EntryError naming the first such entry, and m
// is left partly transformed. FisherZ panics unless 0 < clip < 1.
func FisherZ(m *mat.Dense, clip float64) error {
	if !(clip > 0 && clip < 1) {
		panic(fmt.Sprintf("data: FisherZ clip %v is not in (0, 1)", clip))
	}
	limit := 1 - clip
	rows, cols := m.Dims()
	for i := range rows {
		for j := range cols {
			r := m.At(i, j)
			switch {
			case math.IsNaN(r):
				return &EntryError{i + 1, j + 1, errors.New("value is NaN, want a correlation in [-1, 1]")}
			case math.Abs(r) > 1+correlationSlack:
				return &EntryError{i + 1, j + 1, fmt.Errorf("value %v is not a correlation in [-1, 1] (if the matrix is already Fisher z, set preprocess.functional.transform = \"none\")", r)}
			}
			m.Set(i, j, math.Atanh(math.Max(-limit, math.Min(limit, r))))
		}
	}
	return nil
}

// ZeroDiagonal sets the diagonal of m to 0.
func ZeroDiagonal(m *mat.Dense) {
	rows, cols := m.Dims()
	for i := range min(rows, cols) {
		m.Set(i, i, 0)
	}
}

// Log1p replaces every entry c of m by ln(1 + c), which compresses the
// heavy tail of streamline counts while keeping 0 at 0. A negative or
// non-finite entry is an *EntryError naming the first such entry; m is then
// left partly transformed.
func Log1p(m *mat.Dense) error {
	rows, cols := m.Dims()
	for i := range rows {
		for j := range cols {
			c := m.At(i, j)
			if !(c >= 0) || math.IsInf(c, 1) {
				return &EntryError{i + 1, j + 1, fmt.Errorf("value %v is not a non-negative count", c)}
			}
			m.Set(i, j, math.Log1p(c))
		}
	}
	return nil
}

// ScaleByMax divides every entry of m by the largest entry, so that a
// non-negative matrix ends in [0, 1] with its strongest edge at 1. A matrix
// whose largest entry is not positive (no edges) cannot be scaled: that is
// an error and m is unchanged.
func ScaleByMax(m *mat.Dense) error {
	largest := mat.Max(m)
	if !(largest > 0) {
		return fmt.Errorf("largest value is %v: the matrix has no edges to scale by (preprocess.structural.scale = \"max\")", largest)
	}
	m.Scale(1/largest, m)
	return nil
}

// ScaleByTotal divides every entry of m by the total edge weight, the sum
// of the strict upper triangle (each edge counted once; the diagonal is not
// counted), so that the edge weights of a symmetric matrix sum to 1. A
// total that is not positive (no edges) is an error and m is unchanged.
func ScaleByTotal(m *mat.Dense) error {
	rows, cols := m.Dims()
	var total float64
	for i := range rows {
		for j := i + 1; j < cols; j++ {
			total += m.At(i, j)
		}
	}
	if !(total > 0) {
		return fmt.Errorf("total edge weight is %v: the matrix has no edges to scale by (preprocess.structural.scale = \"total\")", total)
	}
	m.Scale(1/total, m)
	return nil
}

// KeepDensity keeps the strongest edges of the square matrix m and sets the
// others to 0: k = round(density · p(p−1)/2) region pairs of the strict
// upper triangle are kept, ranked by value, largest first; an edge that
// ties with others at the cut is kept if it comes first in row-major order
// of the upper triangle (row i, then column j > i), so the result is the
// same on every run. The lower triangle is then set from the upper
// one (the result is symmetric even if m was not) and the diagonal to 0.
// Pairs that are 0 stay 0 even if ranked among the k. KeepDensity panics
// unless 0 < density ≤ 1.
func KeepDensity(m *mat.Dense, density float64) {
	if !(density > 0 && density <= 1) {
		panic(fmt.Sprintf("data: KeepDensity density %v is not in (0, 1]", density))
	}
	p := mustSquare("KeepDensity", m)
	type pair struct {
		i, j int
		w    float64
	}
	pairs := make([]pair, 0, p*(p-1)/2)
	for i := range p {
		for j := i + 1; j < p; j++ {
			pairs = append(pairs, pair{i, j, m.At(i, j)})
		}
	}
	// pairs is in row-major order: a stable sort by descending weight
	// keeps that order among ties.
	slices.SortStableFunc(pairs, func(a, b pair) int { return cmp.Compare(b.w, a.w) })
	keep := int(math.Round(density * float64(len(pairs))))
	for n, e := range pairs {
		w := e.w
		if n >= keep {
			w = 0
		}
		m.Set(e.i, e.j, w)
		m.Set(e.j, e.i, w)
	}
	ZeroDiagonal(m)
}

func checkFinite(m *mat.Dense) error {
	rows, cols := m.Dims()
	for i := range rows {
		for j := range cols {
			if v := m.At(i, j); math.IsNaN(v) || math.IsInf(v, 0) {
				return &EntryError{i + 1, j + 1, fmt.Errorf("value %v is not a finite number", v)}
			}
		}
	}
	return nil
}

// mustSquare returns the size of the square matrix m and panics if m is
// not square: a programmer error, since loading checks shapes.
func mustSquare(fn string, m mat.Matrix) int {
	r, c := m.Dims()
	if r != c {
		panic(fmt.Sprintf("data: %s of a %d×%d matrix, want a square one", fn, r, c))
	}
	return r
}
