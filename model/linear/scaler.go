package linear

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// A scaler standardizes edges with statistics of a set of rows:
// x̃ = (x − mean) · factor, factor = 1/SD (population SD, over the rows)
// for z-scoring, 1 for centring only, and 0 for an edge that is constant
// over the rows.
type scaler struct {
	mean, factor []float64
	// spread is trace of the standardized rows' covariance, Σ var·factor²:
	// the mean eigenvalue of their centred kernel, trace(K)/n.
	spread float64
}

// fitScaler computes the statistics of x's rows.
func fitScaler(x rowReader, rows []int, zscore bool) scaler {
	d := x.width()
	s := scaler{mean: make([]float64, d), factor: make([]float64, d)}
	sumSq := make([]float64, d)
	for _, i := range rows {
		row := x.row(i)
		for k, v := range row {
			s.mean[k] += v
		}
	}
	n := float64(len(rows))
	for k := range s.mean {
		s.mean[k] /= n
	}
	for _, i := range rows {
		row := x.row(i)
		for k, v := range row {
			dv := v - s.mean[k]
			sumSq[k] += dv * dv
		}
	}
	for k := range s.factor {
		variance := sumSq[k] / n
		// An edge whose spread is round-off of its mean is constant.
		if variance <= sq(1e-12*math.Abs(s.mean[k])) || variance == 0 {
			continue
		}
		s.factor[k] = 1
		if zscore {
			s.factor[k] = 1 / math.Sqrt(variance)
		}
		s.spread += variance * s.factor[k] * s.factor[k]
	}
	return s
}

func sq(x float64) float64 { return x * x }

// applyRows writes the standardized rows of x into the len(rows) × d
// matrix dst and returns it.
func (s scaler) applyRows(dst *mat.Dense, x rowReader, rows []int) *mat.Dense {
	for a, i := range rows {
		src, out := x.row(i), dst.RawRowView(a)
		for k, v := range src {
			out[k] = (v - s.mean[k]) * s.factor[k]
		}
	}
	return dst
}
