package linear

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// NumEdges returns the number of edges of a p × p connectome, p(p−1)/2:
// the pairs i < j.
func NumEdges(p int) int { return p * (p - 1) / 2 }

// Edges returns the upper triangle (i < j) of the square matrix m as a
// vector of length p(p−1)/2, row by row: (0,1), (0,2), …, (0,p−1), (1,2), …
// EdgePair maps a position back to its pair. The diagonal is not included.
// Edges panics if m is not square.
func Edges(m *mat.Dense) []float64 {
	return appendEdges(nil, m)
}

func appendEdges(dst []float64, m *mat.Dense) []float64 {
	r, c := m.Dims()
	if r != c {
		panic(fmt.Sprintf("linear: Edges of a %d×%d matrix, want a square one", r, c))
	}
	raw := m.RawMatrix()
	for i := 0; i < r; i++ {
		dst = append(dst, raw.Data[i*raw.Stride+i+1:i*raw.Stride+r]...)
	}
	return dst
}

// EdgePair returns the regions (i, j), i < j, of position k of Edges for a
// p × p matrix. It panics if k is out of range.
func EdgePair(p, k int) (i, j int) {
	if k < 0 || k >= NumEdges(p) {
		panic(fmt.Sprintf("linear: edge %d out of range for p = %d", k, p))
	}
	for i = 0; k >= p-1-i; i++ {
		k -= p - 1 - i
	}
	return i, i + 1 + k
}

// edgeMatrix returns the len(ps) × d matrix whose row i holds participant
// i's edges of the chosen input (functional, structural, or functional
// then structural). p is the number of regions every matrix must have; 0
// means take it from the first participant. A participant without the
// modality, with a matrix of another size or with a non-finite edge is an
// error naming the participant.
func edgeMatrix(ps []*data.Participant, input Input, p int) (*mat.Dense, int, error) {
	src, p, err := newEdgeRows(ps, input, p)
	if err != nil {
		return nil, p, err
	}
	return src.matrix(), p, nil
}

// A rowReader gives the rows of an n × d matrix one at a time. The slice
// row returns may be overwritten by the next call and must not be changed.
type rowReader interface {
	row(i int) []float64
	width() int
}

// denseRows reads the rows of a matrix.
type denseRows struct{ *mat.Dense }

func (m denseRows) row(i int) []float64 { return m.RawRowView(i) }
func (m denseRows) width() int          { _, d := m.Dims(); return d }

// edgeRows reads participants' edge vectors (the rows of edgeMatrix)
// from their matrices as they are asked for, so that a model need not hold
// a second copy of the cohort. A participant's matrix is read whole
// (Participant.Functional, Structural) or, when the cohort keeps it
// compact (data.Compact, cohort.storage = "float32"), from its packed
// upper triangle, widened to float64 row by row.
type edgeRows struct {
	ps      []*data.Participant
	mats    []edgeSource
	p, d    int
	scratch []float64
}

// edgeSource is one modality of a participant as edgeRows reads it.
type edgeSource struct {
	name   string
	dense  func(*data.Participant) *mat.Dense
	packed func(*data.Compact) []float32
}

var (
	functionalSource = edgeSource{"functional",
		func(q *data.Participant) *mat.Dense { return q.Functional },
		func(c *data.Compact) []float32 { return c.Functional }}
	structuralSource = edgeSource{"structural",
		func(q *data.Participant) *mat.Dense { return q.Structural },
		func(c *data.Compact) []float32 { return c.Structural }}
)

// regions returns the number of regions (rows) of q's matrix of source
// s, and false when q has none.
func (s edgeSource) regions(q *data.Participant) (int, bool) {
	if m := s.dense(q); m != nil {
		r, _ := m.Dims()
		return r, true
	}
	if q.Compact != nil && s.packed(q.Compact) != nil {
		return q.Compact.P, true
	}
	return 0, false
}

// appendEdges appends q's p(p−1)/2 edges of source s to dst; q's matrix
// is known to exist and be p × p.
func (s edgeSource) appendEdges(dst []float64, q *data.Participant, p int) []float64 {
	if m := s.dense(q); m != nil {
		return appendEdges(dst, m)
	}
	for _, v := range s.packed(q.Compact)[:NumEdges(p)] {
		dst = append(dst, float64(v))
	}
	return dst
}

// newEdgeRows checks every participant's matrices as edgeMatrix does and
// returns a reader of their edges.
func newEdgeRows(ps []*data.Participant, input Input, p int) (*edgeRows, int, error) {
	if len(ps) == 0 {
		return nil, p, fmt.Errorf("linear: no participants")
	}
	var mats []edgeSource
	switch input {
	case InputFunctional:
		mats = append(mats, functionalSource)
	case InputStructural:
		mats = append(mats, structuralSource)
	case InputBoth:
		mats = append(mats, functionalSource, structuralSource)
	default:
		panic(fmt.Sprintf("linear: unknown input %q", input))
	}
	if p == 0 {
		n, ok := mats[0].regions(ps[0])
		if !ok {
			return nil, p, fmt.Errorf("participant %q: no %s connectome, but the model's input is %q", ps[0].ID, mats[0].name, input)
		}
		p = n
	}
	d := NumEdges(p) * len(mats)
	src := &edgeRows{ps: ps, mats: mats, p: p, d: d, scratch: make([]float64, 0, d)}
	for _, q := range ps {
		row := src.scratch[:0]
		for _, s := range mats {
			n, ok := s.regions(q)
			if !ok {
				return nil, p, fmt.Errorf("participant %q: no %s connectome, but the model's input is %q", q.ID, s.name, input)
			}
			r, c := n, n
			if m := s.dense(q); m != nil {
				r, c = m.Dims()
			}
			if r != p || c != p {
				return nil, p, fmt.Errorf("participant %q: %s connectome is %d×%d, want %d×%d like the training participants", q.ID, s.name, r, c, p, p)
			}
			start := len(row)
			row = s.appendEdges(row, q, p)
			for k, v := range row[start:] {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					a, b := EdgePair(p, k)
					return nil, p, fmt.Errorf("participant %q: %s connectome has %v at row %d, column %d", q.ID, s.name, v, a+1, b+1)
				}
			}
		}
	}
	return src, p, nil
}

func (e *edgeRows) row(i int) []float64 {
	row := e.scratch[:0]
	for _, s := range e.mats {
		row = s.appendEdges(row, e.ps[i], e.p)
	}
	return row
}

func (e *edgeRows) width() int { return e.d }

// matrix returns the edges as a len(ps) × d matrix.
func (e *edgeRows) matrix() *mat.Dense {
	x := mat.NewDense(len(e.ps), e.d, nil)
	for i := range e.ps {
		copy(x.RawRowView(i), e.row(i))
	}
	return x
}
