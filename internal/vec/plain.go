//go:build !(goexperiment.simd && amd64)

package vec

const simd = false

func adam32(a Adam[float32], w, g, m, v []float32) { adamPlain(a, w, g, m, v) }
