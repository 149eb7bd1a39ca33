//go:build !purego

#include "textflag.h"

// tailmask<>+32−4t is the mask of the first t of eight lanes.
DATA tailmask<>+0(SB)/4, $-1
DATA tailmask<>+4(SB)/4, $-1
DATA tailmask<>+8(SB)/4, $-1
DATA tailmask<>+12(SB)/4, $-1
DATA tailmask<>+16(SB)/4, $-1
DATA tailmask<>+20(SB)/4, $-1
DATA tailmask<>+24(SB)/4, $-1
DATA tailmask<>+28(SB)/4, $-1
DATA tailmask<>+32(SB)/4, $0
DATA tailmask<>+36(SB)/4, $0
DATA tailmask<>+40(SB)/4, $0
DATA tailmask<>+44(SB)/4, $0
DATA tailmask<>+48(SB)/4, $0
DATA tailmask<>+52(SB)/4, $0
DATA tailmask<>+56(SB)/4, $0
DATA tailmask<>+60(SB)/4, $0
GLOBL tailmask<>(SB), RODATA|NOPTR, $64

// TAILMASK sets Y8 to the mask of the first CX (1–7) lanes; uses AX.
#define TAILMASK \
	LEAQ    tailmask<>+32(SB), AX; \
	SHLQ    $2, CX;                \
	SUBQ    CX, AX;                \
	VMOVDQU (AX), Y8

// func leakyRowAVX2(h, c *float32, n int, r, f0, f1 float32)
// Sets h[j] = v·(f1 if v's sign bit is set, else f0), v = r + c[j], for
// j < n, eight at a time, the last n mod 8 under a mask. Needs AVX2.
TEXT ·leakyRowAVX2(SB), NOSPLIT, $0-36
	MOVQ         h+0(FP), DI
	MOVQ         c+8(FP), SI
	MOVQ         n+16(FP), CX
	VBROADCASTSS r+24(FP), Y0
	VBROADCASTSS f0+28(FP), Y1
	VBROADCASTSS f1+32(FP), Y2
	MOVQ         CX, BX
	SHRQ         $3, BX
	JZ           row_tail

row_loop:
	VMOVUPS   (SI), Y3
	VADDPS    Y3, Y0, Y3     // v = r + c
	VBLENDVPS Y3, Y2, Y1, Y4 // f[sign bit of v]
	VMULPS    Y4, Y3, Y3     // v·f
	VMOVUPS   Y3, (DI)
	ADDQ      $32, SI
	ADDQ      $32, DI
	DECQ      BX
	JNZ       row_loop

row_tail:
	ANDQ       $7, CX
	JZ         row_done
	TAILMASK
	VMASKMOVPS (SI), Y8, Y3
	VADDPS     Y3, Y0, Y3
	VBLENDVPS  Y3, Y2, Y1, Y4
	VMULPS     Y4, Y3, Y3
	VMASKMOVPS Y3, Y8, (DI)

row_done:
	VZEROUPPER
	RET

// func leakySumAccAVX2(grad, c, acc *float32, n int, r, f0, f1 float32) float32
// For j < n, eight at a time: t = grad[j]·f[sign bit of r + c[j]], lane
// j mod 8 of a vector sum gains t and acc[j] += t; the last n mod 8 are
// loaded under a mask, zeros in the other lanes (the padding of
// LeakySumsAcc, whose terms enter the lane sums), and stored under it.
// Returns the lane sums added as reduce8 does. Needs AVX2.
TEXT ·leakySumAccAVX2(SB), NOSPLIT, $0-52
	MOVQ         grad+0(FP), DI
	MOVQ         c+8(FP), SI
	MOVQ         acc+16(FP), DX
	MOVQ         n+24(FP), CX
	VBROADCASTSS r+32(FP), Y0
	VBROADCASTSS f0+36(FP), Y1
	VBROADCASTSS f1+40(FP), Y2
	VXORPS       Y6, Y6, Y6
	MOVQ         CX, BX
	SHRQ         $3, BX
	JZ           sum_tail

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
	ADDQ $32, SI
	ADDQ $32, DI
	ADDQ $32, DX
	DECQ BX
	JNZ  sum_loop

sum_tail:
	ANDQ $7, CX
	JZ   sum_reduce
	TAILMASK
	VMASKMOVPS (SI), Y8, Y3
	VADDPS     Y3, Y0, Y3
	VBLENDVPS  Y3, Y2, Y1, Y4
	VMASKMOVPS (DI), Y8, Y5
	VMULPS     Y4, Y5, Y5
	VADDPS     Y5, Y6, Y6
	VMASKMOVPS (DX), Y8, Y7
	VADDPS     Y5, Y7, Y7
	VMASKMOVPS Y7, Y8, (DX)

sum_reduce:
	// ((s0+s4)+(s2+s6)) + ((s1+s5)+(s3+s7))
	VEXTRACTF128 $1, Y6, X7
	VADDPS       X7, X6, X6 // s0+s4, s1+s5, s2+s6, s3+s7
	VMOVHLPS     X6, X6, X7
	VADDPS       X7, X6, X6 // (s0+s4)+(s2+s6), (s1+s5)+(s3+s7), …
	VMOVSHDUP    X6, X7
	VADDSS       X7, X6, X6
	VMOVSS       X6, ret+48(FP)
	VZEROUPPER
	RET
