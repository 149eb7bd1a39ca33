package synth_test

import (
	"testing"

	"github.com/skein-neuro/skein/data/synth"
)

// BenchmarkGenerate makes a demo-sized cohort (140 participants, 32 regions).
func BenchmarkGenerate(b *testing.B) {
	for b.Loop() {
		if _, err := synth.Generate(synth.Config{N: 140, P: 32, Seed: 1, StructuralShare: 0.3}); err != nil {
			b.Fatal(err)
		}
	}
}
