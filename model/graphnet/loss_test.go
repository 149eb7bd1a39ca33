package graphnet

import (
	"math"
	"testing"
)

func TestMaskedLoss(t *testing.T) {
	nan := math.NaN()
	// Hand-computed: residuals e = pred − target at the present targets.
	tests := []struct {
		name         string
		f            lossFunc
		pred, target []float64
		want         float64
	}{
		// e = (1, −2): mean|e| = 1.5, mean e² = 2.5.
		{"abs+squared", lossFunc{abs: 1, squared: 1, huber: 0, delta: 1}, []float64{2, 0}, []float64{1, 2}, 4},
		// The NaN score is missing: only e = 1 and e = −2 count.
		{"missing score", lossFunc{abs: 1, squared: 1, huber: 0, delta: 1}, []float64{2, 5, 0}, []float64{1, nan, 2}, 4},
		{"all missing", lossFunc{abs: 1, squared: 1, huber: 0, delta: 1}, []float64{2, 5}, []float64{nan, nan}, 0},
		// Huber δ = 1: h(1) = 0.5, h(−2) = 1·(2 − 0.5) = 1.5; mean 1.
		{"huber", lossFunc{abs: 0, squared: 0, huber: 1, delta: 1}, []float64{2, 0}, []float64{1, 2}, 1},
		// Weights: 0.5·1.5 + 2·2.5 + 3·1 = 8.75.
		{"weighted", lossFunc{abs: 0.5, squared: 2, huber: 3, delta: 1}, []float64{2, 0}, []float64{1, 2}, 8.75},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := tt.f.mean(tt.pred, tt.target); math.Abs(got-tt.want) > 1e-12 {
				t.Errorf("loss = %v, want %v", got, tt.want)
			}
			// The gradient against central differences of the loss.
			grad := make([]float64, len(tt.pred))
			lossGrad(tt.f, 1, tt.pred, tt.target, grad)
			for i := range tt.pred {
				const h = 1e-6
				p := append([]float64(nil), tt.pred...)
				p[i] += h
				up := tt.f.mean(p, tt.target)
				p[i] -= 2 * h
				down := tt.f.mean(p, tt.target)
				if fd := (up - down) / (2 * h); math.Abs(fd-grad[i]) > 1e-6 {
					t.Errorf("gradient[%d] = %v, finite difference %v", i, grad[i], fd)
				}
			}
		})
	}
}
