package gemm

// goKernel returns the plain Go kernel, 4 × 4 tiles, for element type T.
func goKernel[T float]() kernel[T] {
	var z T
	nc := 2048 // kc × nc × 4 bytes: 2 MiB of float32
	if _, ok := any(z).(float64); ok {
		nc = 1024
	}
	return kernel[T]{name: "go", mr: 4, nr: 4, mc: 128, kc: 256, nc: nc, micro: micro4x4[T]}
}

// micro4x4 is the plain Go micro-kernel: sixteen accumulators, which fit
// the registers of amd64 and arm64.
func micro4x4[T float](k int, a, b, c []T, ldc int, add bool) {
	var (
		c00, c01, c02, c03 T
		c10, c11, c12, c13 T
		c20, c21, c22, c23 T
		c30, c31, c32, c33 T
	)
	a, b = a[:4*k], b[:4*k]
	for p := 0; p < 4*k; p += 4 {
		ap, bp := a[p:p+4:p+4], b[p:p+4:p+4]
		a0, a1, a2, a3 := ap[0], ap[1], ap[2], ap[3]
		b0, b1, b2, b3 := bp[0], bp[1], bp[2], bp[3]
		c00 += a0 * b0
		c01 += a0 * b1
		c02 += a0 * b2
		c03 += a0 * b3
		c10 += a1 * b0
		c11 += a1 * b1
		c12 += a1 * b2
		c13 += a1 * b3
		c20 += a2 * b0
		c21 += a2 * b1
		c22 += a2 * b2
		c23 += a2 * b3
		c30 += a3 * b0
		c31 += a3 * b1
		c32 += a3 * b2
		c33 += a3 * b3
	}
	r0, r1, r2, r3 := c[0:4:4], c[ldc:ldc+4:ldc+4], c[2*ldc:2*ldc+4:2*ldc+4], c[3*ldc:3*ldc+4:3*ldc+4]
	if add {
		r0[0], r0[1], r0[2], r0[3] = r0[0]+c00, r0[1]+c01, r0[2]+c02, r0[3]+c03
		r1[0], r1[1], r1[2], r1[3] = r1[0]+c10, r1[1]+c11, r1[2]+c12, r1[3]+c13
		r2[0], r2[1], r2[2], r2[3] = r2[0]+c20, r2[1]+c21, r2[2]+c22, r2[3]+c23
		r3[0], r3[1], r3[2], r3[3] = r3[0]+c30, r3[1]+c31, r3[2]+c32, r3[3]+c33
		return
	}
	r0[0], r0[1], r0[2], r0[3] = c00, c01, c02, c03
	r1[0], r1[1], r1[2], r1[3] = c10, c11, c12, c13
	r2[0], r2[1], r2[2], r2[3] = c20, c21, c22, c23
	r3[0], r3[1], r3[2], r3[3] = c30, c31, c32, c33
}
