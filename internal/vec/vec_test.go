package vec

import (
	"math"
	"math/rand/v2"
	"testing"
)

// lengths cover empty rows, rows shorter than a vector, and every tail
// length after whole vectors.
var lengths = []int{0, 1, 5, 7, 8, 9, 15, 16, 17, 31, 116, 268}

// randomRow returns n values of both signs, with zeros of both signs among
// them.
func randomRow(rng *rand.Rand, n int) []float32 {
	s := make([]float32, n)
	for j := range s {
		switch rng.IntN(10) {
		case 0:
			s[j] = 0
		case 1:
			s[j] = float32(math.Copysign(0, -1))
		default:
			s[j] = float32(rng.NormFloat64())
		}
	}
	return s
}

func same32(a, b []float32) bool {
	for j := range a {
		if math.Float32bits(a[j]) != math.Float32bits(b[j]) {
			return false
		}
	}
	return len(a) == len(b)
}

// TestLeakyRowSameAsPlain: the loop this build runs gives the plain loop's
// bits (on amd64 with AVX2, the assembly loop).
func TestLeakyRowSameAsPlain(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	f := [2]float32{1, 0.2}
	for _, n := range lengths {
		c := randomRow(rng, n)
		for _, r := range []float32{0, float32(math.Copysign(0, -1)), 0.3, -0.7} {
			got, want := make([]float32, n), make([]float32, n)
			LeakyRow(got, c, r, f)
			leakyRowPlain(want, c, r, f)
			if !same32(got, want) {
				t.Errorf("n = %d, r = %v: got %v, want %v", n, r, got, want)
			}
		}
	}
}

func TestLeakySumsAccSameAsPlain(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14))
	f := [2]float32{1, 0.2}
	for _, n := range lengths {
		for _, rows := range []int{0, 1, 3, 4, 5, 9} {
			ld := n + 3 // rows that are not contiguous
			g, c, acc, r := randomRow(rng, rows*ld), randomRow(rng, n), randomRow(rng, n), randomRow(rng, rows)
			gotAcc, wantAcc := append([]float32(nil), acc...), append([]float32(nil), acc...)
			got, want := make([]float32, rows), make([]float32, rows)
			LeakySumsAcc(g, ld, c, r, f, gotAcc, got)
			leakySumsAccPlain(g, ld, c, r, f, wantAcc, want)
			if !same32(got, want) || !same32(gotAcc, wantAcc) {
				t.Errorf("n = %d, %d rows: got %v and %v, want %v and %v", n, rows, got, gotAcc, want, wantAcc)
			}
		}
	}
}

func TestAdamSameAsPlain(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	a := Adam[float32]{Beta1: 0.9, Beta2: 0.999, Eps: 1e-8, Keep: 1 - 1e-3*1e-2, StepSize: 1e-3 / (1 - 0.9*0.9), InvRootBC2: float32(1 / math.Sqrt(1-0.999*0.999))}
	for _, n := range lengths {
		w, g, m := randomRow(rng, n), randomRow(rng, n), randomRow(rng, n)
		v := randomRow(rng, n)
		for j := range v {
			v[j] = float32(math.Abs(float64(v[j])))
		}
		w1, m1, v1 := append([]float32(nil), w...), append([]float32(nil), m...), append([]float32(nil), v...)
		a.Step(w1, g, m1, v1)
		adamPlain(a, w, g, m, v)
		if !same32(w1, w) || !same32(m1, m) || !same32(v1, v) {
			t.Errorf("n = %d: weights or moments differ from the plain loop's", n)
		}
	}
}

// TestLeakySumsAccFloat64 checks the float64 loop against the definition.
// Common practice, no source: the leaky rectifier's derivative is 1 for
// positive inputs and the slope otherwise.
func TestLeakySumsAccFloat64(t *testing.T) {
	g := []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10}
	c := []float64{-1, 1, -1, 1, -1, 1, -1, 1, -1, 1}
	acc, sums := make([]float64, len(g)), make([]float64, 1)
	LeakySumsAcc(g, len(g), c, []float64{0.5}, [2]float64{1, 0.25}, acc, sums)
	// r + c[j] is −0.5 (slope 0.25) for even j and 1.5 (slope 1) for odd j.
	want := 0.0
	for j, gj := range g {
		term := gj
		if j%2 == 0 {
			term *= 0.25
		}
		if acc[j] != term {
			t.Errorf("acc[%d] = %v, want %v", j, acc[j], term)
		}
		want += term
	}
	if sums[0] != want { // small integers and quarters: every order gives the same sum
		t.Errorf("sum %v, want %v", sums[0], want)
	}
}

func BenchmarkLeakySumsAcc(b *testing.B) {
	const p = 116
	rng := rand.New(rand.NewPCG(7, 8))
	g, c, r, acc, sums := randomRow(rng, p*p), randomRow(rng, p), randomRow(rng, p), make([]float32, p), make([]float32, p)
	b.SetBytes(p * p * 4)
	for b.Loop() {
		LeakySumsAcc(g, p, c, r, [2]float32{1, 0.2}, acc, sums)
	}
}

func BenchmarkLeakyRow(b *testing.B) {
	rng := rand.New(rand.NewPCG(9, 10))
	h, c := make([]float32, 116), randomRow(rng, 116)
	b.SetBytes(116 * 4)
	for b.Loop() {
		LeakyRow(h, c, 0.1, [2]float32{1, 0.2})
	}
}

func BenchmarkAdam(b *testing.B) {
	const n = 1 << 14
	rng := rand.New(rand.NewPCG(11, 12))
	w, g, m, v := randomRow(rng, n), randomRow(rng, n), make([]float32, n), make([]float32, n)
	a := Adam[float32]{Beta1: 0.9, Beta2: 0.999, Eps: 1e-8, Keep: 1, StepSize: 1e-3, InvRootBC2: 1}
	b.SetBytes(n * 4)
	for b.Loop() {
		a.Step(w, g, m, v)
	}
}

// TestVectorLoopsInUse says whether this build runs the float32 loops on
// vectors, so that CI can check that its fast build tested them.
func TestVectorLoopsInUse(t *testing.T) { t.Logf("vector loops: %t", SIMD()) }
