package data_test

import (
	"testing"

	"github.com/skein-neuro/skein/data"
)

// BenchmarkOperator builds each operator of a 100-region cycle with chords.
func BenchmarkOperator(b *testing.B) {
	a := cycleGraph(100)
	for i := 0; i < 100; i += 7 {
		a.Set(i, (i+31)%100, 2)
		a.Set((i+31)%100, i, 2)
	}
	for _, kind := range data.OperatorKinds() {
		b.Run(string(kind), func(b *testing.B) {
			for b.Loop() {
				if _, err := data.Operator(kind, a); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
