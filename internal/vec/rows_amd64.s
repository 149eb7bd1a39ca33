//go:build !purego

#include "textflag.h"

// func leakyRowAVX2(h, c *float32, n int, r, f0, f1 float32)
// Sets h[j] = v·(f1 if v's sign bit is set, else f0), v = r + c[j], for
// j < n; n a positive multiple of 8. Needs AVX2.
TEXT ·leakyRowAVX2(SB), NOSPLIT, $0-36
	MOVQ         h+0(FP), DI
	MOVQ         c+8(FP), SI
	MOVQ         n+16(FP), CX
	VBROADCASTSS r+24(FP), Y0
	VBROADCASTSS f0+28(FP), Y1
	VBROADCASTSS f1+32(FP), Y2

row_loop:
	VMOVUPS   (SI), Y3
	VADDPS    Y3, Y0, Y3     // v = r + c
	VBLENDVPS Y3, Y2, Y1, Y4 // f[sign bit of v]
	VMULPS    Y4, Y3, Y3     // v·f
	VMOVUPS   Y3, (DI)
	ADDQ      $32, SI
	ADDQ      $32, DI
	SUBQ      $8, CX
	JNZ       row_loop
	VZEROUPPER
	RET

// func leakySumAccAVX2(grad, c, acc *float32, n int, r, f0, f1 float32, s *[8]float32)
// For j < n (a positive multiple of 8): t = grad[j]·f[sign bit of r + c[j]],
// lane j mod 8 of the sum gains t (j in order) and acc[j] += t. Stores
// the eight lane sums, started from zero, in s. Needs AVX2.
TEXT ·leakySumAccAVX2(SB), NOSPLIT, $0-56
	MOVQ         grad+0(FP), DI
	MOVQ         c+8(FP), SI
	MOVQ         acc+16(FP), DX
	MOVQ         n+24(FP), CX
	VBROADCASTSS r+32(FP), Y0
	VBROADCASTSS f0+36(FP), Y1
	VBROADCASTSS f1+40(FP), Y2
	VXORPS       Y6, Y6, Y6

sum_loop:
	VMOVUPS   (SI), Y3
	VADDPS    Y3, Y0, Y3     // r + c
	VBLENDVPS Y3, Y2, Y1, Y4 // f[sign bit]
	VMOVUPS   (DI), Y5
	VMULPS    Y4, Y5, Y5     // t = g·f
	VADDPS    Y5, Y6, Y6     // lane sums
	VMOVUPS   (DX), Y7
	VADDPS    Y5, Y7, Y7     // acc + t
	VMOVUPS   Y7, (DX)
	ADDQ      $32, SI
	ADDQ      $32, DI
	ADDQ      $32, DX
	SUBQ      $8, CX
	JNZ       sum_loop
	MOVQ      s+48(FP), AX
	VMOVUPS   Y6, (AX)
	VZEROUPPER
	RET
