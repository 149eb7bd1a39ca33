//go:build goexperiment.simd && amd64

package vec

import "simd/archsimd"

// simd: the float32 loops run on Float32x8 vectors (AVX2).
var simd = archsimd.X86.AVX2()

// leakyRow32 is LeakyRow on float32, eight columns a vector, the columns
// left in one vector padded with zeros.
func leakyRow32(h, c []float32, r float32, f [2]float32) {
	if !simd {
		leakyRowPlain(h, c, r, f)
		return
	}
	h = h[:len(c)]
	rv := archsimd.BroadcastFloat32x8(r)
	one, slope := archsimd.BroadcastFloat32x8(f[0]), archsimd.BroadcastFloat32x8(f[1])
	rectify := func(c archsimd.Float32x8) archsimd.Float32x8 {
		v := rv.Add(c)
		return v.Mul(slope.Merge(one, v.AsInt32x8().Less(archsimd.Int32x8{})))
	}
	j := 0
	for ; j+8 <= len(c); j += 8 {
		rectify(archsimd.LoadFloat32x8Slice(c[j:])).StoreSlice(h[j:])
	}
	if j < len(c) {
		rectify(archsimd.LoadFloat32x8SlicePart(c[j:])).StoreSlicePart(h[j:])
	}
}

// leakySumAcc32 is LeakySumsAcc of one row on float32: lane k of the
// vector sum is partial sum k, eight columns a vector; the columns left
// are one vector padded with zeros, as LeakySumsAcc states.
func leakySumAcc32(g, c []float32, r float32, f [2]float32, acc []float32) float32 {
	if !simd {
		return leakySumAccPlain(g, c, r, f, acc)
	}
	c, acc = c[:len(g)], acc[:len(g)]
	rv := archsimd.BroadcastFloat32x8(r)
	one, slope := archsimd.BroadcastFloat32x8(f[0]), archsimd.BroadcastFloat32x8(f[1])
	terms := func(g, c archsimd.Float32x8) archsimd.Float32x8 {
		return g.Mul(slope.Merge(one, rv.Add(c).AsInt32x8().Less(archsimd.Int32x8{})))
	}
	var sum archsimd.Float32x8
	j := 0
	for ; j+8 <= len(g); j += 8 {
		v := terms(archsimd.LoadFloat32x8Slice(g[j:]), archsimd.LoadFloat32x8Slice(c[j:]))
		sum = sum.Add(v)
		archsimd.LoadFloat32x8Slice(acc[j:]).Add(v).StoreSlice(acc[j:])
	}
	if j < len(g) {
		v := terms(archsimd.LoadFloat32x8SlicePart(g[j:]), archsimd.LoadFloat32x8SlicePart(c[j:]))
		sum = sum.Add(v)
		archsimd.LoadFloat32x8SlicePart(acc[j:]).Add(v).StoreSlicePart(acc[j:])
	}
	var s [8]float32
	sum.Store(&s)
	return reduce8(s)
}

// leakySumsAcc32 is LeakySumsAcc on float32, four rows at a time: each
// vector of columns of c and acc is loaded once for the four rows, and
// acc takes the rows' terms in row order.
func leakySumsAcc32(g []float32, ld int, c, r []float32, f [2]float32, acc, sums []float32) {
	if !simd {
		leakySumsAccPlain(g, ld, c, r, f, acc, sums)
		return
	}
	n := len(c)
	acc = acc[:n]
	one, slope := archsimd.BroadcastFloat32x8(f[0]), archsimd.BroadcastFloat32x8(f[1])
	factor := func(pre archsimd.Float32x8) archsimd.Float32x8 {
		return slope.Merge(one, pre.AsInt32x8().Less(archsimd.Int32x8{}))
	}
	i := 0
	for ; i+4 <= len(r); i += 4 {
		g0, g1, g2, g3 := g[i*ld:][:n], g[(i+1)*ld:][:n], g[(i+2)*ld:][:n], g[(i+3)*ld:][:n]
		r0, r1 := archsimd.BroadcastFloat32x8(r[i]), archsimd.BroadcastFloat32x8(r[i+1])
		r2, r3 := archsimd.BroadcastFloat32x8(r[i+2]), archsimd.BroadcastFloat32x8(r[i+3])
		var s0, s1, s2, s3 archsimd.Float32x8
		j := 0
		for ; j+8 <= n; j += 8 {
			cj := archsimd.LoadFloat32x8Slice(c[j:])
			v0 := archsimd.LoadFloat32x8Slice(g0[j:]).Mul(factor(r0.Add(cj)))
			v1 := archsimd.LoadFloat32x8Slice(g1[j:]).Mul(factor(r1.Add(cj)))
			v2 := archsimd.LoadFloat32x8Slice(g2[j:]).Mul(factor(r2.Add(cj)))
			v3 := archsimd.LoadFloat32x8Slice(g3[j:]).Mul(factor(r3.Add(cj)))
			s0, s1, s2, s3 = s0.Add(v0), s1.Add(v1), s2.Add(v2), s3.Add(v3)
			archsimd.LoadFloat32x8Slice(acc[j:]).Add(v0).Add(v1).Add(v2).Add(v3).StoreSlice(acc[j:])
		}
		if j < n { // the last vector padded with zeros
			cj := archsimd.LoadFloat32x8SlicePart(c[j:])
			v0 := archsimd.LoadFloat32x8SlicePart(g0[j:]).Mul(factor(r0.Add(cj)))
			v1 := archsimd.LoadFloat32x8SlicePart(g1[j:]).Mul(factor(r1.Add(cj)))
			v2 := archsimd.LoadFloat32x8SlicePart(g2[j:]).Mul(factor(r2.Add(cj)))
			v3 := archsimd.LoadFloat32x8SlicePart(g3[j:]).Mul(factor(r3.Add(cj)))
			s0, s1, s2, s3 = s0.Add(v0), s1.Add(v1), s2.Add(v2), s3.Add(v3)
			archsimd.LoadFloat32x8SlicePart(acc[j:]).Add(v0).Add(v1).Add(v2).Add(v3).StoreSlicePart(acc[j:])
		}
		var s [8]float32
		for k, sk := range [4]archsimd.Float32x8{s0, s1, s2, s3} {
			sk.Store(&s)
			sums[i+k] = reduce8(s)
		}
	}
	for ; i < len(r); i++ {
		sums[i] = leakySumAcc32(g[i*ld:][:n], c, r[i], f, acc)
	}
}

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
