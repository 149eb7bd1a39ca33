//go:build !purego

package vec

import (
	"math"

	"golang.org/x/sys/cpu"
)

// The float32 rectifier rows run on AVX2 in Go assembly when the processor
// has it, in every build; they take the plain loops' steps in the same
// order, so the bits are the same (the tests check it).
var hasAVX2 = cpu.X86.HasAVX2

// leakyRowFast is leakyRowPlain, whole vectors of eight on AVX2.
func leakyRowFast(h, c []float32, r float32, f [2]float32) {
	n := len(c) &^ 7
	if !hasAVX2 || n == 0 {
		leakyRowPlain(h, c, r, f)
		return
	}
	h = h[:len(c)]
	leakyRowAVX2(&h[0], &c[0], n, r, f[0], f[1])
	leakyRowPlain(h[n:], c[n:], r, f)
}

// leakySumsAccFast is leakySumsAccPlain, whole vectors of eight of each
// row on AVX2 and the rest of the row (and its padding) as
// leakySumAccPlain does them.
func leakySumsAccFast(g []float32, ld int, c, r []float32, f [2]float32, acc, sums []float32) {
	n := len(c) &^ 7
	if !hasAVX2 || n == 0 {
		leakySumsAccPlain(g, ld, c, r, f, acc, sums)
		return
	}
	acc = acc[:len(c)]
	for i, ri := range r {
		row := g[i*ld:][:len(c)]
		var s [8]float32
		leakySumAccAVX2(&row[0], &c[0], &acc[0], n, ri, f[0], f[1], &s)
		for j := n; j < n+8; j++ {
			if j >= len(c) { // the padding
				s[j&7] += 0 * f[math.Float32bits(ri+0)>>31]
				continue
			}
			v := row[j] * f[math.Float32bits(ri+c[j])>>31]
			s[j&7] += v
			acc[j] += v
		}
		sums[i] = reduce8(s)
	}
}

//go:noescape
func leakyRowAVX2(h, c *float32, n int, r, f0, f1 float32)

//go:noescape
func leakySumAccAVX2(grad, c, acc *float32, n int, r, f0, f1 float32, s *[8]float32)
