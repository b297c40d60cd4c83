#include "textflag.h"

// TILE_START loads the arguments both tiles share (k in CX; a, b and c
// in SI, DI and DX; their strides in bytes in R8, R9 and R10) and zeroes
// the eight accumulators. A VEX instruction on a Y register clears the
// rest of its Z register too, so this serves the AVX-512 tile as well.
#define TILE_START \
	MOVQ   k+0(FP), CX      \
	MOVQ   a+8(FP), SI      \
	MOVQ   lda+16(FP), R8   \
	SHLQ   $3, R8           \
	MOVQ   b+24(FP), DI     \
	MOVQ   ldb+32(FP), R9   \
	SHLQ   $3, R9           \
	MOVQ   c+40(FP), DX     \
	MOVQ   ldc+48(FP), R10  \
	SHLQ   $3, R10          \
	VXORPD Y0, Y0, Y0       \
	VXORPD Y1, Y1, Y1       \
	VXORPD Y2, Y2, Y2       \
	VXORPD Y3, Y3, Y3       \
	VXORPD Y4, Y4, Y4       \
	VXORPD Y5, Y5, Y5       \
	VXORPD Y6, Y6, Y6       \
	VXORPD Y7, Y7, Y7

// func tileFMA(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int, sign float64)
//
// C[r][j] += sign·Σ_p A[p][r]·B[p][j] for r < 4, j < 8, p < k, where
// A[p][r] is a[p*lda+r], B[p][j] is b[p*ldb+j] and C[r][j] is c[r*ldc+j].
// Eight accumulators, one per half row of the tile (Y0-Y7), so that
// eight fused multiply-adds are in flight, as the units' latency needs.
TEXT ·tileFMA(SB), NOSPLIT, $0-64
	TILE_START

loop:
	TESTQ CX, CX
	JE    done
	VMOVUPD      (DI), Y8
	VMOVUPD      32(DI), Y9
	VBROADCASTSD (SI), Y10
	VFMADD231PD  Y8, Y10, Y0
	VFMADD231PD  Y9, Y10, Y1
	VBROADCASTSD 8(SI), Y11
	VFMADD231PD  Y8, Y11, Y2
	VFMADD231PD  Y9, Y11, Y3
	VBROADCASTSD 16(SI), Y12
	VFMADD231PD  Y8, Y12, Y4
	VFMADD231PD  Y9, Y12, Y5
	VBROADCASTSD 24(SI), Y13
	VFMADD231PD  Y8, Y13, Y6
	VFMADD231PD  Y9, Y13, Y7
	ADDQ         R8, SI
	ADDQ         R9, DI
	DECQ         CX
	JMP          loop

done:
	VBROADCASTSD sign+56(FP), Y8
	VMOVUPD      (DX), Y9
	VFMADD231PD  Y0, Y8, Y9
	VMOVUPD      Y9, (DX)
	VMOVUPD      32(DX), Y9
	VFMADD231PD  Y1, Y8, Y9
	VMOVUPD      Y9, 32(DX)
	ADDQ         R10, DX
	VMOVUPD      (DX), Y9
	VFMADD231PD  Y2, Y8, Y9
	VMOVUPD      Y9, (DX)
	VMOVUPD      32(DX), Y9
	VFMADD231PD  Y3, Y8, Y9
	VMOVUPD      Y9, 32(DX)
	ADDQ         R10, DX
	VMOVUPD      (DX), Y9
	VFMADD231PD  Y4, Y8, Y9
	VMOVUPD      Y9, (DX)
	VMOVUPD      32(DX), Y9
	VFMADD231PD  Y5, Y8, Y9
	VMOVUPD      Y9, 32(DX)
	ADDQ         R10, DX
	VMOVUPD      (DX), Y9
	VFMADD231PD  Y6, Y8, Y9
	VMOVUPD      Y9, (DX)
	VMOVUPD      32(DX), Y9
	VFMADD231PD  Y7, Y8, Y9
	VMOVUPD      Y9, 32(DX)
	VZEROUPPER
	RET

// func tileAVX512(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int, sign float64)
//
// tileFMA's sum with 512-bit registers: a row of the tile is one register.
// Two steps of p at a time into two sets of four accumulators (Z0-Z3 for
// even p, Z4-Z7 for odd p), added at the end, so that eight fused
// multiply-adds are in flight.
TEXT ·tileAVX512(SB), NOSPLIT, $0-64
	TILE_START
	LEAQ    (SI)(R8*1), R11
	LEAQ    (DI)(R9*1), R12
	SHLQ    $1, R8
	SHLQ    $1, R9

pairs:
	CMPQ         CX, $2
	JLT          last
	VMOVUPD      (DI), Z8
	VMOVUPD      (R12), Z9
	VBROADCASTSD (SI), Z10
	VFMADD231PD  Z8, Z10, Z0
	VBROADCASTSD (R11), Z11
	VFMADD231PD  Z9, Z11, Z4
	VBROADCASTSD 8(SI), Z12
	VFMADD231PD  Z8, Z12, Z1
	VBROADCASTSD 8(R11), Z13
	VFMADD231PD  Z9, Z13, Z5
	VBROADCASTSD 16(SI), Z14
	VFMADD231PD  Z8, Z14, Z2
	VBROADCASTSD 16(R11), Z15
	VFMADD231PD  Z9, Z15, Z6
	VBROADCASTSD 24(SI), Z10
	VFMADD231PD  Z8, Z10, Z3
	VBROADCASTSD 24(R11), Z11
	VFMADD231PD  Z9, Z11, Z7
	ADDQ         R8, SI
	ADDQ         R8, R11
	ADDQ         R9, DI
	ADDQ         R9, R12
	SUBQ         $2, CX
	JMP          pairs

last:
	TESTQ        CX, CX
	JE           sum
	VMOVUPD      (DI), Z8
	VBROADCASTSD (SI), Z10
	VFMADD231PD  Z8, Z10, Z0
	VBROADCASTSD 8(SI), Z12
	VFMADD231PD  Z8, Z12, Z1
	VBROADCASTSD 16(SI), Z14
	VFMADD231PD  Z8, Z14, Z2
	VBROADCASTSD 24(SI), Z10
	VFMADD231PD  Z8, Z10, Z3

sum:
	VADDPD       Z4, Z0, Z0
	VADDPD       Z5, Z1, Z1
	VADDPD       Z6, Z2, Z2
	VADDPD       Z7, Z3, Z3
	VBROADCASTSD sign+56(FP), Z8
	VMOVUPD      (DX), Z9
	VFMADD231PD  Z0, Z8, Z9
	VMOVUPD      Z9, (DX)
	ADDQ         R10, DX
	VMOVUPD      (DX), Z9
	VFMADD231PD  Z1, Z8, Z9
	VMOVUPD      Z9, (DX)
	ADDQ         R10, DX
	VMOVUPD      (DX), Z9
	VFMADD231PD  Z2, Z8, Z9
	VMOVUPD      Z9, (DX)
	ADDQ         R10, DX
	VMOVUPD      (DX), Z9
	VFMADD231PD  Z3, Z8, Z9
	VMOVUPD      Z9, (DX)
	VZEROUPPER
	RET
