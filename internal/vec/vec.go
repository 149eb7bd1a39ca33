// Package vec holds the element loops that dominate a graph-filter
// network's training step, apart from its matrix products: the leaky
// rectifier of an edge-to-edge layer's output, the sums of its gradient,
// and Adam's update.
//
// Each loop has a plain Go version. On amd64 processors with AVX2, the
// float32 rectifier loops (LeakyRow, LeakySumsAcc) run on 256-bit vectors
// in Go assembly, in every build (the build tag purego turns that off);
// with GOEXPERIMENT=simd on amd64 (Go 1.26's simd/archsimd), Adam's float32
// loop runs on vectors too. The vector and plain versions take the same
// steps in the same order, so their results are the same to the bit (the
// tests check it), and every build trains the same networks. The float64
// loops are plain Go in every build.
//
// Leaky rectifier: f[0] = 1 and f[1] = the slope; a value v is multiplied
// by f[s], s the sign bit of v (so −0 takes the slope, which leaves it −0).
package vec

import (
	"math"
	"unsafe"
)

// Float is a floating-point element type of the loops.
type Float interface{ float32 | float64 }

// SIMD reports whether this build runs Adam's float32 loop on vectors
// (GOEXPERIMENT=simd on AVX2; the rectifier loops run on vectors on any
// amd64 processor with AVX2).
func SIMD() bool { return simd }

// LeakyRow sets h[j] = v·f[s] for v = r + c[j], s the sign bit of v: one
// row of an edge-to-edge layer's output (r its row term, c its column
// terms) put through the leaky rectifier. len(h) must be at least len(c).
func LeakyRow[T Float](h, c []T, r T, f [2]T) {
	if is32[T]() {
		leakyRowFast(as32(h), as32(c), float32(r), [2]float32{float32(f[0]), float32(f[1])})
		return
	}
	h64, c64 := as64(h)[:len(c)], as64(c)
	r64, f64 := float64(r), [2]float64{float64(f[0]), float64(f[1])}
	for j, cj := range c64 {
		v := r64 + cj
		h64[j] = v * f64[math.Float64bits(v)>>63]
	}
}

// LeakySumsAcc takes the gradient g of the rows of a leaky rectifier's
// output and, for row i (g[i·ld:][:len(c)], the rectifier's input being
// r[i] + c[j]), sets sums[i] = Σ_j g[i,j]·f[s_ij], s_ij the sign bit of
// r[i] + c[j], and adds each term to acc[j], row 0 first: the row and
// column sums of one channel of an edge-to-edge layer's output gradient.
// len(acc) must be at least len(c), len(sums) at least len(r).
//
// A row's sum is kept in eight partial sums, term j in sum j mod 8, as
// the eight lanes of a vector would keep it. When len(c) is not a
// multiple of 8, the row is padded to one with g = c = 0, whose terms
// 0·f[s] go into the sums as well (they are zeros, but their signs can
// matter when a sum is zero). The partial sums are added at the end as
// ((s0+s4)+(s2+s6))+((s1+s5)+(s3+s7)).
func LeakySumsAcc[T Float](g []T, ld int, c, r []T, f [2]T, acc, sums []T) {
	if is32[T]() {
		leakySumsAccFast(as32(g), ld, as32(c), as32(r), [2]float32{float32(f[0]), float32(f[1])}, as32(acc), as32(sums))
		return
	}
	for i, ri := range r {
		sums[i] = T(leakySumAcc64(as64(g[i*ld:][:len(c)]), as64(c), float64(ri), [2]float64{float64(f[0]), float64(f[1])}, as64(acc)))
	}
}

// leakySumAcc64 is LeakySumsAcc of one row on float64: it returns the
// row's sum.
func leakySumAcc64(g, c []float64, r float64, f [2]float64, acc []float64) float64 {
	c, acc = c[:len(g)], acc[:len(g)]
	var s [8]float64
	for j, gj := range g {
		v := gj * f[math.Float64bits(r+c[j])>>63]
		s[j&7] += v
		acc[j] += v
	}
	for j := len(g); j&7 != 0; j++ { // the padding
		s[j&7] += 0 * f[math.Float64bits(r+0)>>63]
	}
	return reduce8(s)
}

// Adam holds the factors of one step of Adam with decoupled weight decay
// (see Step).
type Adam[T Float] struct {
	Beta1, Beta2 T // the moments' decay rates β1, β2
	Eps          T // ε
	Keep         T // 1 − η·λ, η the rate and λ the weight decay
	StepSize     T // η/(1 − β1^t)
	InvRootBC2   T // 1/sqrt(1 − β2^t)
}

// Step updates weights w with gradients g and moments m and v, element
// by element, in this order and in T's arithmetic:
//
//	m ← β1·m + (1−β1)·g
//	v ← β2·v + ((1−β2)·g)·g
//	w ← w·keep − (stepSize·m) / (sqrt(v)·invRootBC2 + ε)
//
// g, m and v must be at least as long as w.
func (a Adam[T]) Step(w, g, m, v []T) {
	if is32[T]() {
		a32 := Adam[float32]{float32(a.Beta1), float32(a.Beta2), float32(a.Eps), float32(a.Keep), float32(a.StepSize), float32(a.InvRootBC2)}
		adam32(a32, as32(w), as32(g), as32(m), as32(v))
		return
	}
	adamPlain(a, w, g, m, v)
}

// adamPlain is Step, one element at a time.
func adamPlain[T Float](a Adam[T], w, g, m, v []T) {
	g, m, v = g[:len(w)], m[:len(w)], v[:len(w)]
	b1, b2 := a.Beta1, a.Beta2
	omb1, omb2 := 1-b1, 1-b2
	for j := range w {
		gj := g[j]
		mj := b1*m[j] + omb1*gj
		vj := b2*v[j] + omb2*gj*gj
		m[j], v[j] = mj, vj
		w[j] = w[j]*a.Keep - a.StepSize*mj/(T(math.Sqrt(float64(vj)))*a.InvRootBC2+a.Eps)
	}
}

// leakyRowPlain is LeakyRow on float32, one element at a time.
func leakyRowPlain(h, c []float32, r float32, f [2]float32) {
	h = h[:len(c)]
	for j, cj := range c {
		v := r + cj
		h[j] = v * f[math.Float32bits(v)>>31]
	}
}

// leakySumAccPlain is LeakySumsAcc of one row on float32, one element at
// a time, eight to a round so that the partial sums stay in registers; it
// returns the row's sum.
func leakySumAccPlain(g, c []float32, r float32, f [2]float32, acc []float32) float32 {
	c, acc = c[:len(g)], acc[:len(g)]
	term := func(j int) float32 {
		if j >= len(g) { // the padding
			return 0 * f[math.Float32bits(r+0)>>31]
		}
		v := g[j] * f[math.Float32bits(r+c[j])>>31]
		acc[j] += v
		return v
	}
	var s0, s1, s2, s3, s4, s5, s6, s7 float32
	for j := 0; j < len(g); j += 8 {
		s0 += term(j)
		s1 += term(j + 1)
		s2 += term(j + 2)
		s3 += term(j + 3)
		s4 += term(j + 4)
		s5 += term(j + 5)
		s6 += term(j + 6)
		s7 += term(j + 7)
	}
	return reduce8([8]float32{s0, s1, s2, s3, s4, s5, s6, s7})
}

// leakySumsAccPlain is LeakySumsAcc on float32, one row at a time.
func leakySumsAccPlain(g []float32, ld int, c, r []float32, f [2]float32, acc, sums []float32) {
	for i, ri := range r {
		sums[i] = leakySumAccPlain(g[i*ld:][:len(c)], c, ri, f, acc)
	}
}

// reduce8 adds the eight partial sums in the order LeakySumsAcc states.
func reduce8[T Float](s [8]T) T {
	return ((s[0] + s[4]) + (s[2] + s[6])) + ((s[1] + s[5]) + (s[3] + s[7]))
}

func is32[T Float]() bool {
	var z T
	return unsafe.Sizeof(z) == 4
}

// as32 and as64 reinterpret a []T whose T is known (by is32) to be float32
// or float64; they copy nothing.
func as32[T Float](s []T) []float32 {
	return unsafe.Slice((*float32)(unsafe.Pointer(unsafe.SliceData(s))), len(s))
}

func as64[T Float](s []T) []float64 {
	return unsafe.Slice((*float64)(unsafe.Pointer(unsafe.SliceData(s))), len(s))
}
