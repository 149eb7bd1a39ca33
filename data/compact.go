package data

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/internal/enum"
)

// Storage is the value of the key cohort.storage: how Check keeps each
// participant's preprocessed matrices. StorageFloat64 or StorageFloat32
// ("" is unset, which SetDefaults makes StorageFloat64).
type Storage string

// Settings of cohort.storage.
const (
	// StorageFloat64 keeps each matrix whole, p × p in float64, in
	// Participant.Functional and Participant.Structural.
	StorageFloat64 Storage = "float64"
	// StorageFloat32 keeps each matrix as its upper triangle and
	// diagonal in float32, in Participant.Compact (see Compact), and
	// leaves Functional and Structural nil: p(p+1)/2 × 4 bytes instead of
	// p² × 8, a little over a quarter. Computation stays in float64: the
	// matrices are widened where they are read, so results differ from
	// StorageFloat64 by the rounding of each entry to float32 (a relative
	// error of at most 2⁻²⁴ ≈ 6e-8 per entry) and the loss of asymmetry
	// within symmetry_tolerance (entry (j, i) is read as entry (i, j)).
	StorageFloat32 Storage = "float32"
)

// UnmarshalText sets s to the word text: "float64", "float32" or ""
// (unset). Another word is an error listing these.
func (s *Storage) UnmarshalText(text []byte) error {
	return enum.Parse(s, text, StorageFloat64, StorageFloat32)
}

// MarshalText returns the word of s.
func (s Storage) MarshalText() ([]byte, error) { return []byte(s), nil }

// String returns the word of s.
func (s Storage) String() string { return string(s) }

// Compact holds a participant's preprocessed matrices as float32 upper
// triangles, the storage of cohort.storage = "float32". For a p × p
// symmetric matrix A, its slice has length p(p+1)/2: first the
// p(p−1)/2 edges A_ij, i < j, row by row ((0,1), (0,2), …, (0,p−1),
// (1,2), …), the order in which the linear baselines read edges; then
// the p diagonal entries A_ii. Entry (j, i) is taken to equal (i, j).
type Compact struct {
	// P is the number of regions.
	P int
	// Functional and Structural hold the packed matrices, nil when the
	// participant has no such modality. The slices of a cohort's
	// participants may share one backing array; they are never written
	// after Check.
	Functional, Structural []float32
}

// PackedLen returns the length of a packed p × p matrix, p(p+1)/2.
func PackedLen(p int) int { return p * (p + 1) / 2 }

// Pack writes the upper triangle and diagonal of the p × p matrix m to
// dst in the order Compact describes, rounded to float32. dst must have
// length PackedLen(p); Pack panics if it has not or if m is not square.
func Pack(dst []float32, m *mat.Dense) {
	r, c := m.Dims()
	if r != c {
		panic(fmt.Sprintf("data: Pack of a %d×%d matrix, want a square one", r, c))
	}
	if len(dst) != PackedLen(r) {
		panic(fmt.Sprintf("data: Pack of a %d×%d matrix into %d values, want %d", r, r, len(dst), PackedLen(r)))
	}
	raw := m.RawMatrix()
	k := 0
	for i := 0; i < r; i++ {
		for _, v := range raw.Data[i*raw.Stride+i+1 : i*raw.Stride+r] {
			dst[k] = float32(v)
			k++
		}
	}
	for i := 0; i < r; i++ {
		dst[k+i] = float32(raw.Data[i*raw.Stride+i])
	}
}

// Unpack returns the symmetric p × p float64 matrix whose upper triangle
// and diagonal packed holds (see Compact). It panics if len(packed) is
// not PackedLen(p).
func Unpack(p int, packed []float32) *mat.Dense {
	if len(packed) != PackedLen(p) {
		panic(fmt.Sprintf("data: Unpack of %d values, want %d for p = %d", len(packed), PackedLen(p), p))
	}
	m := mat.NewDense(p, p, nil)
	raw := m.RawMatrix()
	k := 0
	for i := 0; i < p; i++ {
		raw.Data[i*raw.Stride+i] = float64(packed[p*(p-1)/2+i])
		for j := i + 1; j < p; j++ {
			v := float64(packed[k])
			raw.Data[i*raw.Stride+j] = v
			raw.Data[j*raw.Stride+i] = v
			k++
		}
	}
	return m
}

// FunctionalMatrix returns the participant's p × p functional matrix:
// Functional when it is set, else a new float64 matrix unpacked from
// Compact.Functional (Unpack), else nil. Callers must not modify the
// result, which may be the participant's own matrix.
func (p *Participant) FunctionalMatrix() *mat.Dense {
	if p.Functional != nil || p.Compact == nil || p.Compact.Functional == nil {
		return p.Functional
	}
	return Unpack(p.Compact.P, p.Compact.Functional)
}

// StructuralMatrix is FunctionalMatrix for the structural matrix.
func (p *Participant) StructuralMatrix() *mat.Dense {
	if p.Structural != nil || p.Compact == nil || p.Compact.Structural == nil {
		return p.Structural
	}
	return Unpack(p.Compact.P, p.Compact.Structural)
}

// HasFunctional reports whether the participant has a functional matrix,
// whole or compact.
func (p *Participant) HasFunctional() bool {
	return p.Functional != nil || p.Compact != nil && p.Compact.Functional != nil
}

// HasStructural reports whether the participant has a structural
// matrix, whole or compact.
func (p *Participant) HasStructural() bool {
	return p.Structural != nil || p.Compact != nil && p.Compact.Structural != nil
}

// compactStore hands out the packed matrices of a cohort from a few large
// blocks, so that a cohort's compact matrices are stored together rather
// than as one small allocation each.
type compactStore struct {
	size  int // PackedLen(p)
	left  int // participants still to come, an upper bound
	block []float32
}

// next returns a slice of length size for one matrix.
func (s *compactStore) next() []float32 {
	if len(s.block) < s.size {
		n := min(max(s.left, 1), 256)
		s.block = make([]float32, n*s.size)
	}
	out := s.block[:s.size:s.size]
	s.block = s.block[s.size:]
	s.left--
	return out
}
