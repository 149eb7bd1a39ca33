//go:build !(goexperiment.simd && amd64)

package vec

const simd = false

func leakyRow32(h, c []float32, r float32, f [2]float32) { leakyRowPlain(h, c, r, f) }

func leakySumsAcc32(g []float32, ld int, c, r []float32, f [2]float32, acc, sums []float32) {
	leakySumsAccPlain(g, ld, c, r, f, acc, sums)
}

func adam32(a Adam[float32], w, g, m, v []float32) { adamPlain(a, w, g, m, v) }
