package data

import (
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/internal/enum"
)

// OperatorKind names a graph operator built from a structural matrix: the
// matrix a graph filter multiplies node signals by to propagate them along
// the edges.
type OperatorKind string

// The graph operators skein builds from a symmetric, non-negative p × p
// adjacency A with degrees d_i = Σ_j A_ij (a diagonal entry of A counts as a
// self-loop) and D = diag(d).
//
// Isolated regions (d_i = 0) never give NaN or Inf: D^-1/2 is defined as 0
// there, so in NormalizedLaplacian an isolated region i has row and column
// i equal to those of the identity (eigenvalue 1). This differs from Chung
// (1997, Spectral Graph Theory, §1.2), who sets that diagonal entry to 0.
const (
	// Identity is I: no propagation.
	Identity OperatorKind = "identity"
	// Laplacian is the combinatorial Laplacian L = D − A.
	Laplacian OperatorKind = "laplacian"
	// NormalizedLaplacian is the symmetric normalized Laplacian
	// I − D^-1/2 A D^-1/2; its eigenvalues lie in [0, 2].
	NormalizedLaplacian OperatorKind = "normalized-laplacian"
	// RenormalizedAdjacency is D̃^-1/2 (A + I) D̃^-1/2 with D̃ the degrees
	// of A + I (the renormalization trick of Kipf & Welling 2017, graph
	// convolutional networks); its eigenvalues lie in (−1, 1].
	RenormalizedAdjacency OperatorKind = "renormalized-adjacency"
	// ScaledLaplacian is 2 L̂/λmax − I with L̂ the symmetric normalized
	// Laplacian and λmax its largest eigenvalue, so its eigenvalues lie in
	// [−1, 1], the domain of the Chebyshev polynomials of Chebyshev graph
	// filters (Defferrard, Bresson & Vandergheynst 2016).
	ScaledLaplacian OperatorKind = "scaled-laplacian"
)

// OperatorKinds lists every operator kind, in the order of the constants.
func OperatorKinds() []OperatorKind {
	return []OperatorKind{Identity, Laplacian, NormalizedLaplacian, RenormalizedAdjacency, ScaledLaplacian}
}

// ParseOperatorKind returns the kind named s, or an error listing the
// names it accepts.
func ParseOperatorKind(s string) (OperatorKind, error) {
	names := make([]string, 0, len(OperatorKinds()))
	for _, k := range OperatorKinds() {
		if string(k) == s {
			return k, nil
		}
		names = append(names, fmt.Sprintf("%q", k))
	}
	return "", fmt.Errorf("operator %q is not one of %s", s, strings.Join(names, ", "))
}

// UnmarshalText sets k to the operator kind text names (one of
// OperatorKinds) or to "" (unset). Another word is an error listing the
// kinds.
func (k *OperatorKind) UnmarshalText(text []byte) error {
	return enum.Parse(k, text, OperatorKinds()...)
}

// MarshalText returns the name of k.
func (k OperatorKind) MarshalText() ([]byte, error) { return []byte(k), nil }

// String returns the name of k.
func (k OperatorKind) String() string { return string(k) }

// symmetryTolerance is the largest |A_ij − A_ji|, relative to the largest
// |A_ij|, that Operator accepts as symmetric (rounding in the files).
// Common practice, no source.
const symmetryTolerance = 1e-9

// Operator returns a new p × p operator of the given kind for the
// symmetric, non-negative p × p adjacency a (a is not modified). An
// asymmetric, negative or non-finite a, an unknown kind, or a
// ScaledLaplacian whose normalized Laplacian is 0 (every region that has
// edges has only a self-loop) is an error. A graph without any edge is
// valid: its normalized Laplacian and scaled Laplacian are I.
// Operator panics if a is not square.
func Operator(kind OperatorKind, a *mat.Dense) (*mat.Dense, error) {
	p := mustSquare("Operator", a)
	if err := checkAdjacency(a); err != nil {
		return nil, err
	}
	switch kind {
	case Identity:
		return identity(p), nil
	case Laplacian:
		deg := degrees(a)
		return subtractFromDiagonal(deg, a), nil
	case NormalizedLaplacian:
		return normalizedLaplacian(a), nil
	case RenormalizedAdjacency:
		withLoops := identity(p)
		withLoops.Add(withLoops, a)
		return symmetricNormalized(withLoops), nil
	case ScaledLaplacian:
		l := normalizedLaplacian(a)
		var eig mat.EigenSym
		if !eig.Factorize(symmetricView(l), false) {
			return nil, fmt.Errorf("scaled Laplacian: eigenvalue decomposition did not converge")
		}
		values := eig.Values(nil)
		lambdaMax := values[len(values)-1] // ascending order
		if !(lambdaMax > 1e-12) {
			return nil, fmt.Errorf("scaled Laplacian: the normalized Laplacian is zero (largest eigenvalue %v): the graph has self-loops but no edge between regions", lambdaMax)
		}
		l.Scale(2/lambdaMax, l)
		for i := range p {
			l.Set(i, i, l.At(i, i)-1)
		}
		return l, nil
	}
	_, err := ParseOperatorKind(string(kind))
	return nil, err
}

func checkAdjacency(a *mat.Dense) error {
	p, _ := a.Dims()
	if err := checkFinite(a); err != nil {
		return err
	}
	scale := math.Max(mat.Max(a), -mat.Min(a))
	for i := range p {
		for j := range p {
			v := a.At(i, j)
			if v < 0 {
				return &EntryError{i + 1, j + 1, fmt.Errorf("weight %v is negative; a structural adjacency must be non-negative", v)}
			}
			if j > i && math.Abs(v-a.At(j, i)) > symmetryTolerance*scale {
				return &EntryError{i + 1, j + 1, fmt.Errorf("weight %v differs from %v at row %d, column %d; the adjacency must be symmetric", v, a.At(j, i), j+1, i+1)}
			}
		}
	}
	return nil
}

func identity(p int) *mat.Dense {
	m := mat.NewDense(p, p, nil)
	for i := range p {
		m.Set(i, i, 1)
	}
	return m
}

func degrees(a *mat.Dense) []float64 {
	p, _ := a.Dims()
	deg := make([]float64, p)
	for i := range p {
		deg[i] = mat.Sum(a.RowView(i))
	}
	return deg
}

// symmetricNormalized returns D^-1/2 a D^-1/2 with D the degrees of a and
// D^-1/2 = 0 where a degree is 0.
func symmetricNormalized(a *mat.Dense) *mat.Dense {
	p, _ := a.Dims()
	invSqrt := degrees(a)
	for i, d := range invSqrt {
		if d > 0 {
			invSqrt[i] = 1 / math.Sqrt(d)
		} else {
			invSqrt[i] = 0
		}
	}
	n := mat.NewDense(p, p, nil)
	n.Apply(func(i, j int, v float64) float64 { return invSqrt[i] * v * invSqrt[j] }, a)
	return n
}

func normalizedLaplacian(a *mat.Dense) *mat.Dense {
	ones := make([]float64, a.RawMatrix().Rows)
	for i := range ones {
		ones[i] = 1
	}
	return subtractFromDiagonal(ones, symmetricNormalized(a))
}

// subtractFromDiagonal returns diag(d) − m, with +0 (not −0) off the
// diagonal where m is 0.
func subtractFromDiagonal(d []float64, m *mat.Dense) *mat.Dense {
	p, _ := m.Dims()
	out := mat.NewDense(p, p, nil)
	out.Apply(func(i, j int, v float64) float64 {
		if i == j {
			return d[i] - v
		}
		return 0 - v
	}, m)
	return out
}

// symmetricView returns the symmetric matrix whose upper triangle is that
// of m.
func symmetricView(m *mat.Dense) *mat.SymDense {
	p, _ := m.Dims()
	s := mat.NewSymDense(p, nil)
	for i := range p {
		for j := i; j < p; j++ {
			s.SetSym(i, j, m.At(i, j))
		}
	}
	return s
}
