#include "textflag.h"

// func tileFMA(k int, a *float64, lda int, b *float64, ldb int, c *float64, ldc int, sign float64)
//
// C[r][j] += sign·Σ_p A[p][r]·B[p][j] for r < 4, j < 8, p < k, where
// A[p][r] is a[p*lda+r], B[p][j] is b[p*ldb+j] and C[r][j] is c[r*ldc+j].
// Eight accumulators, one per half row of the tile (Y0-Y7), so that
// eight fused multiply-adds are in flight, as the units' latency needs.
TEXT ·tileFMA(SB), NOSPLIT, $0-64
	MOVQ k+0(FP), CX
	MOVQ a+8(FP), SI
	MOVQ lda+16(FP), R8
	SHLQ $3, R8
	MOVQ b+24(FP), DI
	MOVQ ldb+32(FP), R9
	SHLQ $3, R9
	MOVQ c+40(FP), DX
	MOVQ ldc+48(FP), R10
	SHLQ $3, R10
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y2, Y2, Y2
	VXORPD Y3, Y3, Y3
	VXORPD Y4, Y4, Y4
	VXORPD Y5, Y5, Y5
	VXORPD Y6, Y6, Y6
	VXORPD Y7, Y7, Y7

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
