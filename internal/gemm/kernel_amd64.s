//go:build !purego

#include "textflag.h"

// Register use of both kernels: SI the packed A panel, DI the packed B
// panel, DX the tile of C, R8 its row stride in bytes, CX and BX counts;
// Y0, Y1 a step of B, Y2, Y3 broadcast values of A, Y4–Y15 the twelve
// accumulators (row r in Y(4+2r) and Y(5+2r)).

// SSTEP does one step of k of the float32 kernel: A at oa(SI), B at ob(DI).
#define SSTEP(oa, ob) \
	VMOVUPS      ob(DI), Y0;    \
	VMOVUPS      ob+32(DI), Y1; \
	VBROADCASTSS oa(SI), Y2;    \
	VBROADCASTSS oa+4(SI), Y3;  \
	VFMADD231PS  Y0, Y2, Y4;    \
	VFMADD231PS  Y1, Y2, Y5;    \
	VFMADD231PS  Y0, Y3, Y6;    \
	VFMADD231PS  Y1, Y3, Y7;    \
	VBROADCASTSS oa+8(SI), Y2;  \
	VBROADCASTSS oa+12(SI), Y3; \
	VFMADD231PS  Y0, Y2, Y8;    \
	VFMADD231PS  Y1, Y2, Y9;    \
	VFMADD231PS  Y0, Y3, Y10;   \
	VFMADD231PS  Y1, Y3, Y11;   \
	VBROADCASTSS oa+16(SI), Y2; \
	VBROADCASTSS oa+20(SI), Y3; \
	VFMADD231PS  Y0, Y2, Y12;   \
	VFMADD231PS  Y1, Y2, Y13;   \
	VFMADD231PS  Y0, Y3, Y14;   \
	VFMADD231PS  Y1, Y3, Y15

// SSET stores one row of the tile; SADD adds it to C. Both step DX.
#define SSET(r0, r1) \
	VMOVUPS r0, (DX);   \
	VMOVUPS r1, 32(DX); \
	ADDQ    R8, DX

#define SADD(r0, r1) \
	VADDPS  (DX), r0, r0;   \
	VADDPS  32(DX), r1, r1; \
	VMOVUPS r0, (DX);       \
	VMOVUPS r1, 32(DX);     \
	ADDQ    R8, DX

// func sgemm6x16(k int, a *float32, b *float32, c *float32, ldc int, add bool)
TEXT ·sgemm6x16(SB), NOSPLIT, $0-41
	MOVQ k+0(FP), CX
	MOVQ a+8(FP), SI
	MOVQ b+16(FP), DI
	MOVQ c+24(FP), DX
	MOVQ ldc+32(FP), R8
	SHLQ $2, R8
	VXORPS Y4, Y4, Y4
	VXORPS Y5, Y5, Y5
	VXORPS Y6, Y6, Y6
	VXORPS Y7, Y7, Y7
	VXORPS Y8, Y8, Y8
	VXORPS Y9, Y9, Y9
	VXORPS Y10, Y10, Y10
	VXORPS Y11, Y11, Y11
	VXORPS Y12, Y12, Y12
	VXORPS Y13, Y13, Y13
	VXORPS Y14, Y14, Y14
	VXORPS Y15, Y15, Y15
	MOVQ   CX, BX
	SHRQ   $2, BX
	JZ     s_tail

s_loop4:
	SSTEP(0, 0)
	SSTEP(24, 64)
	SSTEP(48, 128)
	SSTEP(72, 192)
	ADDQ $96, SI
	ADDQ $256, DI
	DECQ BX
	JNZ  s_loop4

s_tail:
	ANDQ $3, CX
	JZ   s_store

s_loop1:
	SSTEP(0, 0)
	ADDQ $24, SI
	ADDQ $64, DI
	DECQ CX
	JNZ  s_loop1

s_store:
	MOVBQZX add+40(FP), AX
	TESTQ   AX, AX
	JZ      s_set
	SADD(Y4, Y5)
	SADD(Y6, Y7)
	SADD(Y8, Y9)
	SADD(Y10, Y11)
	SADD(Y12, Y13)
	SADD(Y14, Y15)
	VZEROUPPER
	RET

s_set:
	SSET(Y4, Y5)
	SSET(Y6, Y7)
	SSET(Y8, Y9)
	SSET(Y10, Y11)
	SSET(Y12, Y13)
	SSET(Y14, Y15)
	VZEROUPPER
	RET

// DSTEP does one step of k of the float64 kernel: A at oa(SI), B at ob(DI).
#define DSTEP(oa, ob) \
	VMOVUPD      ob(DI), Y0;    \
	VMOVUPD      ob+32(DI), Y1; \
	VBROADCASTSD oa(SI), Y2;    \
	VBROADCASTSD oa+8(SI), Y3;  \
	VFMADD231PD  Y0, Y2, Y4;    \
	VFMADD231PD  Y1, Y2, Y5;    \
	VFMADD231PD  Y0, Y3, Y6;    \
	VFMADD231PD  Y1, Y3, Y7;    \
	VBROADCASTSD oa+16(SI), Y2; \
	VBROADCASTSD oa+24(SI), Y3; \
	VFMADD231PD  Y0, Y2, Y8;    \
	VFMADD231PD  Y1, Y2, Y9;    \
	VFMADD231PD  Y0, Y3, Y10;   \
	VFMADD231PD  Y1, Y3, Y11;   \
	VBROADCASTSD oa+32(SI), Y2; \
	VBROADCASTSD oa+40(SI), Y3; \
	VFMADD231PD  Y0, Y2, Y12;   \
	VFMADD231PD  Y1, Y2, Y13;   \
	VFMADD231PD  Y0, Y3, Y14;   \
	VFMADD231PD  Y1, Y3, Y15

#define DSET(r0, r1) \
	VMOVUPD r0, (DX);   \
	VMOVUPD r1, 32(DX); \
	ADDQ    R8, DX

#define DADD(r0, r1) \
	VADDPD  (DX), r0, r0;   \
	VADDPD  32(DX), r1, r1; \
	VMOVUPD r0, (DX);       \
	VMOVUPD r1, 32(DX);     \
	ADDQ    R8, DX

// func dgemm6x8(k int, a *float64, b *float64, c *float64, ldc int, add bool)
TEXT ·dgemm6x8(SB), NOSPLIT, $0-41
	MOVQ k+0(FP), CX
	MOVQ a+8(FP), SI
	MOVQ b+16(FP), DI
	MOVQ c+24(FP), DX
	MOVQ ldc+32(FP), R8
	SHLQ $3, R8
	VXORPD Y4, Y4, Y4
	VXORPD Y5, Y5, Y5
	VXORPD Y6, Y6, Y6
	VXORPD Y7, Y7, Y7
	VXORPD Y8, Y8, Y8
	VXORPD Y9, Y9, Y9
	VXORPD Y10, Y10, Y10
	VXORPD Y11, Y11, Y11
	VXORPD Y12, Y12, Y12
	VXORPD Y13, Y13, Y13
	VXORPD Y14, Y14, Y14
	VXORPD Y15, Y15, Y15
	MOVQ   CX, BX
	SHRQ   $2, BX
	JZ     d_tail

d_loop4:
	DSTEP(0, 0)
	DSTEP(48, 64)
	DSTEP(96, 128)
	DSTEP(144, 192)
	ADDQ $192, SI
	ADDQ $256, DI
	DECQ BX
	JNZ  d_loop4

d_tail:
	ANDQ $3, CX
	JZ   d_store

d_loop1:
	DSTEP(0, 0)
	ADDQ $48, SI
	ADDQ $64, DI
	DECQ CX
	JNZ  d_loop1

d_store:
	MOVBQZX add+40(FP), AX
	TESTQ   AX, AX
	JZ      d_set
	DADD(Y4, Y5)
	DADD(Y6, Y7)
	DADD(Y8, Y9)
	DADD(Y10, Y11)
	DADD(Y12, Y13)
	DADD(Y14, Y15)
	VZEROUPPER
	RET

d_set:
	DSET(Y4, Y5)
	DSET(Y6, Y7)
	DSET(Y8, Y9)
	DSET(Y10, Y11)
	DSET(Y12, Y13)
	DSET(Y14, Y15)
	VZEROUPPER
	RET

// func copyRows64(dst, src unsafe.Pointer, stride, n int)
// Copies n rows of 64 bytes, stride bytes apart at src, to consecutive
// 64-byte rows at dst (SSE2, which every amd64 processor has); n ≥ 1.
TEXT ·copyRows64(SB), NOSPLIT, $0-32
	MOVQ dst+0(FP), DI
	MOVQ src+8(FP), SI
	MOVQ stride+16(FP), BX
	MOVQ n+24(FP), CX

c_loop:
	MOVUPS (SI), X0
	MOVUPS 16(SI), X1
	MOVUPS 32(SI), X2
	MOVUPS 48(SI), X3
	MOVUPS X0, (DI)
	MOVUPS X1, 16(DI)
	MOVUPS X2, 32(DI)
	MOVUPS X3, 48(DI)
	ADDQ   BX, SI
	ADDQ   $64, DI
	DECQ   CX
	JNZ    c_loop
	RET

// TRANSPOSE8 transposes the 8 × 8 float32 block in Y0–Y7 (row i in Yi)
// into Y8–Y15 (column j in Y(8+j)), through Y0–Y7.
#define TRANSPOSE8 \
	VUNPCKLPS  Y1, Y0, Y8;          \
	VUNPCKHPS  Y1, Y0, Y9;          \
	VUNPCKLPS  Y3, Y2, Y10;         \
	VUNPCKHPS  Y3, Y2, Y11;         \
	VUNPCKLPS  Y5, Y4, Y12;         \
	VUNPCKHPS  Y5, Y4, Y13;         \
	VUNPCKLPS  Y7, Y6, Y14;         \
	VUNPCKHPS  Y7, Y6, Y15;         \
	VSHUFPS    $0x44, Y10, Y8, Y0;  \
	VSHUFPS    $0xEE, Y10, Y8, Y1;  \
	VSHUFPS    $0x44, Y11, Y9, Y2;  \
	VSHUFPS    $0xEE, Y11, Y9, Y3;  \
	VSHUFPS    $0x44, Y14, Y12, Y4; \
	VSHUFPS    $0xEE, Y14, Y12, Y5; \
	VSHUFPS    $0x44, Y15, Y13, Y6; \
	VSHUFPS    $0xEE, Y15, Y13, Y7; \
	VPERM2F128 $0x20, Y4, Y0, Y8;   \
	VPERM2F128 $0x20, Y5, Y1, Y9;   \
	VPERM2F128 $0x20, Y6, Y2, Y10;  \
	VPERM2F128 $0x20, Y7, Y3, Y11;  \
	VPERM2F128 $0x31, Y4, Y0, Y12;  \
	VPERM2F128 $0x31, Y5, Y1, Y13;  \
	VPERM2F128 $0x31, Y6, Y2, Y14;  \
	VPERM2F128 $0x31, Y7, Y3, Y15

// func transpose8(dst *float32, src *float32, ld int, ldd int, n int)
// For each of n blocks b: dst[(8b+p)·ldd + i] = src[i·ld + 8b + p] for
// i, p < 8: eight rows of src (ld elements apart), eight steps at a time,
// written as columns of dst (rows ldd elements apart); n ≥ 1. It needs
// AVX.
TEXT ·transpose8(SB), NOSPLIT, $0-40
	MOVQ dst+0(FP), DI
	MOVQ src+8(FP), SI
	MOVQ ld+16(FP), BX
	SHLQ $2, BX
	MOVQ ldd+24(FP), DX
	SHLQ $2, DX
	MOVQ n+32(FP), CX
	LEAQ (BX)(BX*2), R9  // 3·ld
	LEAQ (BX)(BX*4), R10 // 5·ld
	LEAQ (R9)(R9*1), R11 // 6·ld
	LEAQ (R11)(BX*1), R12 // 7·ld
	LEAQ (DX)(DX*2), R13  // 3·ldd

t_loop:
	VMOVUPS (SI), Y0
	VMOVUPS (SI)(BX*1), Y1
	VMOVUPS (SI)(BX*2), Y2
	VMOVUPS (SI)(R9*1), Y3
	VMOVUPS (SI)(BX*4), Y4
	VMOVUPS (SI)(R10*1), Y5
	VMOVUPS (SI)(R11*1), Y6
	VMOVUPS (SI)(R12*1), Y7
	TRANSPOSE8
	VMOVUPS Y8, (DI)
	VMOVUPS Y9, (DI)(DX*1)
	VMOVUPS Y10, (DI)(DX*2)
	VMOVUPS Y11, (DI)(R13*1)
	LEAQ    (DI)(DX*4), DI
	VMOVUPS Y12, (DI)
	VMOVUPS Y13, (DI)(DX*1)
	VMOVUPS Y14, (DI)(DX*2)
	VMOVUPS Y15, (DI)(R13*1)
	LEAQ    (DI)(DX*4), DI
	ADDQ    $32, SI
	DECQ    CX
	JNZ     t_loop
	VZEROUPPER
	RET

// func transpose4(dst *float64, src *float64, ld int, ldd int, n int)
// For each of n blocks b: dst[(4b+p)·ldd + i] = src[i·ld + 4b + p] for
// i, p < 4: four rows of src (ld elements apart), four steps at a time,
// written as columns of dst (rows ldd elements apart); n ≥ 1. It needs
// AVX.
TEXT ·transpose4(SB), NOSPLIT, $0-40
	MOVQ dst+0(FP), DI
	MOVQ src+8(FP), SI
	MOVQ ld+16(FP), BX
	SHLQ $3, BX
	MOVQ ldd+24(FP), DX
	SHLQ $3, DX
	MOVQ n+32(FP), CX
	LEAQ (BX)(BX*2), R9 // 3·ld
	LEAQ (DX)(DX*2), R13 // 3·ldd

t4_loop:
	VMOVUPD    (SI), Y0
	VMOVUPD    (SI)(BX*1), Y1
	VMOVUPD    (SI)(BX*2), Y2
	VMOVUPD    (SI)(R9*1), Y3
	VUNPCKLPD  Y1, Y0, Y4
	VUNPCKHPD  Y1, Y0, Y5
	VUNPCKLPD  Y3, Y2, Y6
	VUNPCKHPD  Y3, Y2, Y7
	VPERM2F128 $0x20, Y6, Y4, Y0
	VPERM2F128 $0x20, Y7, Y5, Y1
	VPERM2F128 $0x31, Y6, Y4, Y2
	VPERM2F128 $0x31, Y7, Y5, Y3
	VMOVUPD    Y0, (DI)
	VMOVUPD    Y1, (DI)(DX*1)
	VMOVUPD    Y2, (DI)(DX*2)
	VMOVUPD    Y3, (DI)(R13*1)
	LEAQ       (DI)(DX*4), DI
	ADDQ       $32, SI
	DECQ       CX
	JNZ        t4_loop
	VZEROUPPER
	RET

// ZSTEP does one step of k of the float32 AVX-512 kernel: A at oa(SI), B
// at ob(DI); Z0, Z1 a step of B, Z2, Z3 broadcast values of A, Z4–Z15 the
// twelve accumulators (row r in Z(4+2r) and Z(5+2r)).
#define ZSTEP(oa, ob) \
	VMOVUPS      ob(DI), Z0;     \
	VMOVUPS      ob+64(DI), Z1;  \
	VBROADCASTSS oa(SI), Z2;     \
	VBROADCASTSS oa+4(SI), Z3;   \
	VFMADD231PS  Z0, Z2, Z4;     \
	VFMADD231PS  Z1, Z2, Z5;     \
	VFMADD231PS  Z0, Z3, Z6;     \
	VFMADD231PS  Z1, Z3, Z7;     \
	VBROADCASTSS oa+8(SI), Z2;   \
	VBROADCASTSS oa+12(SI), Z3;  \
	VFMADD231PS  Z0, Z2, Z8;     \
	VFMADD231PS  Z1, Z2, Z9;     \
	VFMADD231PS  Z0, Z3, Z10;    \
	VFMADD231PS  Z1, Z3, Z11;    \
	VBROADCASTSS oa+16(SI), Z2;  \
	VBROADCASTSS oa+20(SI), Z3;  \
	VFMADD231PS  Z0, Z2, Z12;    \
	VFMADD231PS  Z1, Z2, Z13;    \
	VFMADD231PS  Z0, Z3, Z14;    \
	VFMADD231PS  Z1, Z3, Z15

#define ZSET(r0, r1) \
	VMOVUPS r0, (DX);   \
	VMOVUPS r1, 64(DX); \
	ADDQ    R8, DX

#define ZADD(r0, r1) \
	VADDPS  (DX), r0, r0;   \
	VADDPS  64(DX), r1, r1; \
	VMOVUPS r0, (DX);       \
	VMOVUPS r1, 64(DX);     \
	ADDQ    R8, DX

// func sgemm6x32(k int, a *float32, b *float32, c *float32, ldc int, add bool)
TEXT ·sgemm6x32(SB), NOSPLIT, $0-41
	MOVQ k+0(FP), CX
	MOVQ a+8(FP), SI
	MOVQ b+16(FP), DI
	MOVQ c+24(FP), DX
	MOVQ ldc+32(FP), R8
	SHLQ $2, R8
	VPXORD Z4, Z4, Z4
	VPXORD Z5, Z5, Z5
	VPXORD Z6, Z6, Z6
	VPXORD Z7, Z7, Z7
	VPXORD Z8, Z8, Z8
	VPXORD Z9, Z9, Z9
	VPXORD Z10, Z10, Z10
	VPXORD Z11, Z11, Z11
	VPXORD Z12, Z12, Z12
	VPXORD Z13, Z13, Z13
	VPXORD Z14, Z14, Z14
	VPXORD Z15, Z15, Z15
	MOVQ   CX, BX
	SHRQ   $2, BX
	JZ     z_tail

z_loop4:
	ZSTEP(0, 0)
	ZSTEP(24, 128)
	ZSTEP(48, 256)
	ZSTEP(72, 384)
	ADDQ $96, SI
	ADDQ $512, DI
	DECQ BX
	JNZ  z_loop4

z_tail:
	ANDQ $3, CX
	JZ   z_store

z_loop1:
	ZSTEP(0, 0)
	ADDQ $24, SI
	ADDQ $128, DI
	DECQ CX
	JNZ  z_loop1

z_store:
	MOVBQZX add+40(FP), AX
	TESTQ   AX, AX
	JZ      z_set
	ZADD(Z4, Z5)
	ZADD(Z6, Z7)
	ZADD(Z8, Z9)
	ZADD(Z10, Z11)
	ZADD(Z12, Z13)
	ZADD(Z14, Z15)
	VZEROUPPER
	RET

z_set:
	ZSET(Z4, Z5)
	ZSET(Z6, Z7)
	ZSET(Z8, Z9)
	ZSET(Z10, Z11)
	ZSET(Z12, Z13)
	ZSET(Z14, Z15)
	VZEROUPPER
	RET

// func copyRows128(dst, src unsafe.Pointer, stride, n int)
// Copies n rows of 128 bytes, stride bytes apart at src, to consecutive
// 128-byte rows at dst (SSE2); n ≥ 1.
TEXT ·copyRows128(SB), NOSPLIT, $0-32
	MOVQ dst+0(FP), DI
	MOVQ src+8(FP), SI
	MOVQ stride+16(FP), BX
	MOVQ n+24(FP), CX

c128_loop:
	MOVUPS (SI), X0
	MOVUPS 16(SI), X1
	MOVUPS 32(SI), X2
	MOVUPS 48(SI), X3
	MOVUPS 64(SI), X4
	MOVUPS 80(SI), X5
	MOVUPS 96(SI), X6
	MOVUPS 112(SI), X7
	MOVUPS X0, (DI)
	MOVUPS X1, 16(DI)
	MOVUPS X2, 32(DI)
	MOVUPS X3, 48(DI)
	MOVUPS X4, 64(DI)
	MOVUPS X5, 80(DI)
	MOVUPS X6, 96(DI)
	MOVUPS X7, 112(DI)
	ADDQ   BX, SI
	ADDQ   $128, DI
	DECQ   CX
	JNZ    c128_loop
	RET
