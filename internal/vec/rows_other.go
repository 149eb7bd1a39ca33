//go:build !amd64 || purego

package vec

func leakyRowFast(h, c []float32, r float32, f [2]float32) { leakyRowPlain(h, c, r, f) }

func leakySumsAccFast(g []float32, ld int, c, r []float32, f [2]float32, acc, sums []float32) {
	leakySumsAccPlain(g, ld, c, r, f, acc, sums)
}
