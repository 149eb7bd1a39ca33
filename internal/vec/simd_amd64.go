//go:build goexperiment.simd && amd64

package vec

import "simd/archsimd"

// simd: Adam's float32 loop runs on Float32x8 vectors (AVX2).
var simd = archsimd.X86.AVX2()

// adam32 is Adam.Step on float32, eight weights a vector, the weights left
// in one vector padded with zeros (whose results are not stored).
func adam32(a Adam[float32], w, g, m, v []float32) {
	if !simd {
		adamPlain(a, w, g, m, v)
		return
	}
	g, m, v = g[:len(w)], m[:len(w)], v[:len(w)]
	b1, b2 := archsimd.BroadcastFloat32x8(a.Beta1), archsimd.BroadcastFloat32x8(a.Beta2)
	omb1, omb2 := archsimd.BroadcastFloat32x8(1-a.Beta1), archsimd.BroadcastFloat32x8(1-a.Beta2)
	eps, keep := archsimd.BroadcastFloat32x8(a.Eps), archsimd.BroadcastFloat32x8(a.Keep)
	stepSize, invRootBC2 := archsimd.BroadcastFloat32x8(a.StepSize), archsimd.BroadcastFloat32x8(a.InvRootBC2)
	update := func(w, g, m, v archsimd.Float32x8) (archsimd.Float32x8, archsimd.Float32x8, archsimd.Float32x8) {
		m = b1.Mul(m).Add(omb1.Mul(g))
		v = b2.Mul(v).Add(omb2.Mul(g).Mul(g))
		return w.Mul(keep).Sub(stepSize.Mul(m).Div(v.Sqrt().Mul(invRootBC2).Add(eps))), m, v
	}
	j := 0
	for ; j+8 <= len(w); j += 8 {
		wj, mj, vj := update(archsimd.LoadFloat32x8Slice(w[j:]), archsimd.LoadFloat32x8Slice(g[j:]), archsimd.LoadFloat32x8Slice(m[j:]), archsimd.LoadFloat32x8Slice(v[j:]))
		wj.StoreSlice(w[j:])
		mj.StoreSlice(m[j:])
		vj.StoreSlice(v[j:])
	}
	if j < len(w) {
		wj, mj, vj := update(archsimd.LoadFloat32x8SlicePart(w[j:]), archsimd.LoadFloat32x8SlicePart(g[j:]), archsimd.LoadFloat32x8SlicePart(m[j:]), archsimd.LoadFloat32x8SlicePart(v[j:]))
		wj.StoreSlicePart(w[j:])
		mj.StoreSlicePart(m[j:])
		vj.StoreSlicePart(v[j:])
	}
}
