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
	if len(ps) == 0 {
		return nil, p, fmt.Errorf("linear: no participants")
	}
	var mats []func(*data.Participant) (*mat.Dense, string)
	functional := func(q *data.Participant) (*mat.Dense, string) { return q.Functional, "functional" }
	structural := func(q *data.Participant) (*mat.Dense, string) { return q.Structural, "structural" }
	switch input {
	case InputFunctional:
		mats = append(mats, functional)
	case InputStructural:
		mats = append(mats, structural)
	case InputBoth:
		mats = append(mats, functional, structural)
	default:
		panic(fmt.Sprintf("linear: unknown input %q", input))
	}
	if p == 0 {
		m, name := mats[0](ps[0])
		if m == nil {
			return nil, p, fmt.Errorf("participant %q: no %s connectome, but the model's input is %q", ps[0].ID, name, input)
		}
		p, _ = m.Dims()
	}
	e := NumEdges(p)
	d := e * len(mats)
	x := mat.NewDense(len(ps), d, nil)
	for i, q := range ps {
		row := x.RawRowView(i)[:0]
		for _, get := range mats {
			m, name := get(q)
			if m == nil {
				return nil, p, fmt.Errorf("participant %q: no %s connectome, but the model's input is %q", q.ID, name, input)
			}
			if r, c := m.Dims(); r != p || c != p {
				return nil, p, fmt.Errorf("participant %q: %s connectome is %d×%d, want %d×%d like the training participants", q.ID, name, r, c, p, p)
			}
			start := len(row)
			row = appendEdges(row, m)
			for k, v := range row[start:] {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					a, b := EdgePair(p, k)
					return nil, p, fmt.Errorf("participant %q: %s connectome has %v at row %d, column %d", q.ID, name, v, a+1, b+1)
				}
			}
		}
	}
	return x, p, nil
}
