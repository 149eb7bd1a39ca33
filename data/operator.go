package data

import (
	"errors"

	"gonum.org/v1/gonum/mat"
)

// OperatorKind names a graph operator built from a structural matrix.
// (Placeholder; the preprocessing work fills it.)
type OperatorKind string

// The graph operators skein builds from a structural adjacency matrix A.
const (
	Identity              OperatorKind = "identity"               // I: no propagation
	Laplacian             OperatorKind = "laplacian"              // L = D − A
	NormalizedLaplacian   OperatorKind = "normalized-laplacian"   // I − D^-1/2 A D^-1/2
	RenormalizedAdjacency OperatorKind = "renormalized-adjacency" // D̃^-1/2 (A + I) D̃^-1/2
	ScaledLaplacian       OperatorKind = "scaled-laplacian"       // 2L/λmax − I
)

// Operator returns the p × p operator of the given kind for the symmetric,
// non-negative p × p adjacency a.
func Operator(kind OperatorKind, a *mat.Dense) (*mat.Dense, error) {
	return nil, errors.New("data: Operator not implemented yet")
}
