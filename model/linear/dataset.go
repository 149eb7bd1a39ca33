package linear

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// joinDatasets returns the participants and scores of train followed by
// those of valid, after checking that each Y matches its participants.
func joinDatasets(train, valid model.Dataset) ([]*data.Participant, *mat.Dense, error) {
	if train.Len() == 0 {
		return nil, nil, fmt.Errorf("linear: the training set has no participants")
	}
	if train.Y == nil {
		return nil, nil, fmt.Errorf("linear: the training set has no scores")
	}
	n, t := train.Y.Dims()
	if n != train.Len() {
		panic(fmt.Sprintf("linear: training Y has %d rows for %d participants", n, train.Len()))
	}
	if valid.Len() == 0 {
		return train.Participants, train.Y, nil
	}
	if valid.Y == nil {
		panic("linear: validation set without scores")
	}
	vn, vt := valid.Y.Dims()
	if vn != valid.Len() || vt != t {
		panic(fmt.Sprintf("linear: validation Y is %d×%d for %d participants and %d targets", vn, vt, valid.Len(), t))
	}
	ps := make([]*data.Participant, 0, n+vn)
	ps = append(append(ps, train.Participants...), valid.Participants...)
	y := mat.NewDense(n+vn, t, nil)
	y.Slice(0, n, 0, t).(*mat.Dense).Copy(train.Y)
	y.Slice(n, n+vn, 0, t).(*mat.Dense).Copy(valid.Y)
	return ps, y, nil
}

// pattern is a set of score columns missing on the same participants.
type pattern struct {
	rows []int // participants whose scores are present, ascending
	cols []int // columns of Y, ascending
}

// missingPatterns groups the columns of y by which rows are present
// (not NaN), in order of each pattern's first column. A column with fewer
// than minRows present scores is an error naming it.
func missingPatterns(y *mat.Dense, minRows int) ([]pattern, error) {
	n, t := y.Dims()
	index := make(map[string]int)
	var pats []pattern
	key := make([]byte, n)
	for j := 0; j < t; j++ {
		var rows []int
		for i := 0; i < n; i++ {
			v := y.At(i, j)
			if math.IsInf(v, 0) {
				return nil, fmt.Errorf("linear: score column %d, row %d: found %v, want a finite score or NaN for missing", j+1, i+1, v)
			}
			key[i] = '1'
			if math.IsNaN(v) {
				key[i] = '0'
			} else {
				rows = append(rows, i)
			}
		}
		if len(rows) < minRows {
			return nil, fmt.Errorf("linear: score column %d: %d scores present in the training fold, need at least %d", j+1, len(rows), minRows)
		}
		k, ok := index[string(key)]
		if !ok {
			k = len(pats)
			index[strings.Clone(string(key))] = k
			pats = append(pats, pattern{rows: rows})
		}
		pats[k].cols = append(pats[k].cols, j)
	}
	return pats, nil
}

// subMatrix returns m[rows, cols] as a new matrix; nil rows or cols means
// all of them.
func subMatrix(m mat.Matrix, rows, cols []int) *mat.Dense {
	r, c := m.Dims()
	if rows == nil {
		rows = seq(r)
	}
	if d, ok := m.(*mat.Dense); ok && cols == nil {
		out := mat.NewDense(len(rows), c, nil)
		for a, i := range rows {
			copy(out.RawRowView(a), d.RawRowView(i))
		}
		return out
	}
	if cols == nil {
		cols = seq(c)
	}
	out := mat.NewDense(len(rows), len(cols), nil)
	for a, i := range rows {
		for b, j := range cols {
			out.Set(a, b, m.At(i, j))
		}
	}
	return out
}

func seq(n int) []int {
	s := make([]int, n)
	for i := range s {
		s[i] = i
	}
	return s
}

var (
	errNotFitted      = errors.New("linear: Predict called before Fit")
	errNoParticipants = errors.New("linear: Predict called with no participants")
)
