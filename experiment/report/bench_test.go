package report

import (
	"math/rand/v2"
	"testing"
)

// BenchmarkImportanceFigure draws one region × region importance map at
// p = 268, the size of a common whole-brain parcellation.
func BenchmarkImportanceFigure(b *testing.B) {
	const p = 268
	rng := rand.New(rand.NewPCG(1, 1))
	m := make([]float64, p*p)
	for i := range p {
		for j := i + 1; j < p; j++ {
			v := rng.NormFloat64()
			m[i*p+j], m[j*p+i] = v, v
		}
	}
	labels := defaultLabels(p)
	b.ResetTimer()
	for range b.N {
		if _, err := heatMap("importance", "region", "region", labels, labels, p, p, m, 7, 6); err != nil {
			b.Fatal(err)
		}
	}
}
