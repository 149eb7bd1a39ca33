//go:build !purego

package vec

import "golang.org/x/sys/cpu"

// The float32 rectifier rows run on AVX2 in Go assembly when the processor
// has it, in every build; they take the plain loops' steps in the same
// order, so the bits are the same (the tests check it).
var hasAVX2 = cpu.X86.HasAVX2

// leakyRowFast is leakyRowPlain, eight values at a time on AVX2.
func leakyRowFast(h, c []float32, r float32, f [2]float32) {
	if !hasAVX2 || len(c) == 0 {
		leakyRowPlain(h, c, r, f)
		return
	}
	_ = h[len(c)-1]
	leakyRowAVX2(&h[0], &c[0], len(c), r, f[0], f[1])
}

// leakySumsAccFast is leakySumsAccPlain, eight values of a row at a time
// on AVX2.
func leakySumsAccFast(g []float32, ld int, c, r []float32, f [2]float32, acc, sums []float32) {
	if !hasAVX2 || len(c) == 0 {
		leakySumsAccPlain(g, ld, c, r, f, acc, sums)
		return
	}
	_ = acc[len(c)-1]
	sums = sums[:len(r)]
	for i, ri := range r {
		row := g[i*ld:][:len(c)]
		sums[i] = leakySumAccAVX2(&row[0], &c[0], &acc[0], len(c), ri, f[0], f[1])
	}
}

//go:noescape
func leakyRowAVX2(h, c *float32, n int, r, f0, f1 float32)

//go:noescape
func leakySumAccAVX2(grad, c, acc *float32, n int, r, f0, f1 float32) float32
