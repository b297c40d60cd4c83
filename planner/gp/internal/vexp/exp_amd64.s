#include "textflag.h"

// Constants, four copies each (one ymm register's worth): the clamp,
// log₂e, the shifter 1.5·2⁵² that rounds to an integer in the low bits,
// ln 2 in two parts (fdlibm's), and 1/k! for the Taylor polynomial.
DATA expc<>+0(SB)/8, $0xc086232bdd7abcd2 // lo -708.3964185322641
DATA expc<>+8(SB)/8, $0xc086232bdd7abcd2
DATA expc<>+16(SB)/8, $0xc086232bdd7abcd2
DATA expc<>+24(SB)/8, $0xc086232bdd7abcd2
DATA expc<>+32(SB)/8, $0x4086280000000000 // hi 709.0
DATA expc<>+40(SB)/8, $0x4086280000000000
DATA expc<>+48(SB)/8, $0x4086280000000000
DATA expc<>+56(SB)/8, $0x4086280000000000
DATA expc<>+64(SB)/8, $0x3ff71547652b82fe // log2e 1.4426950408889634
DATA expc<>+72(SB)/8, $0x3ff71547652b82fe
DATA expc<>+80(SB)/8, $0x3ff71547652b82fe
DATA expc<>+88(SB)/8, $0x3ff71547652b82fe
DATA expc<>+96(SB)/8, $0x4338000000000000 // shift 6755399441055744.0
DATA expc<>+104(SB)/8, $0x4338000000000000
DATA expc<>+112(SB)/8, $0x4338000000000000
DATA expc<>+120(SB)/8, $0x4338000000000000
DATA expc<>+128(SB)/8, $0x3fe62e42fee00000 // ln2hi 0.6931471803691238
DATA expc<>+136(SB)/8, $0x3fe62e42fee00000
DATA expc<>+144(SB)/8, $0x3fe62e42fee00000
DATA expc<>+152(SB)/8, $0x3fe62e42fee00000
DATA expc<>+160(SB)/8, $0x3dea39ef35793c76 // ln2lo 1.9082149292705877e-10
DATA expc<>+168(SB)/8, $0x3dea39ef35793c76
DATA expc<>+176(SB)/8, $0x3dea39ef35793c76
DATA expc<>+184(SB)/8, $0x3dea39ef35793c76
DATA expc<>+192(SB)/8, $0x3de6124613a86d09 // c13 1.6059043836821613e-10
DATA expc<>+200(SB)/8, $0x3de6124613a86d09
DATA expc<>+208(SB)/8, $0x3de6124613a86d09
DATA expc<>+216(SB)/8, $0x3de6124613a86d09
DATA expc<>+224(SB)/8, $0x3e21eed8eff8d898 // c12 2.08767569878681e-09
DATA expc<>+232(SB)/8, $0x3e21eed8eff8d898
DATA expc<>+240(SB)/8, $0x3e21eed8eff8d898
DATA expc<>+248(SB)/8, $0x3e21eed8eff8d898
DATA expc<>+256(SB)/8, $0x3e5ae64567f544e4 // c11 2.505210838544172e-08
DATA expc<>+264(SB)/8, $0x3e5ae64567f544e4
DATA expc<>+272(SB)/8, $0x3e5ae64567f544e4
DATA expc<>+280(SB)/8, $0x3e5ae64567f544e4
DATA expc<>+288(SB)/8, $0x3e927e4fb7789f5c // c10 2.755731922398589e-07
DATA expc<>+296(SB)/8, $0x3e927e4fb7789f5c
DATA expc<>+304(SB)/8, $0x3e927e4fb7789f5c
DATA expc<>+312(SB)/8, $0x3e927e4fb7789f5c
DATA expc<>+320(SB)/8, $0x3ec71de3a556c734 // c9 2.7557319223985893e-06
DATA expc<>+328(SB)/8, $0x3ec71de3a556c734
DATA expc<>+336(SB)/8, $0x3ec71de3a556c734
DATA expc<>+344(SB)/8, $0x3ec71de3a556c734
DATA expc<>+352(SB)/8, $0x3efa01a01a01a01a // c8 2.48015873015873e-05
DATA expc<>+360(SB)/8, $0x3efa01a01a01a01a
DATA expc<>+368(SB)/8, $0x3efa01a01a01a01a
DATA expc<>+376(SB)/8, $0x3efa01a01a01a01a
DATA expc<>+384(SB)/8, $0x3f2a01a01a01a01a // c7 0.0001984126984126984
DATA expc<>+392(SB)/8, $0x3f2a01a01a01a01a
DATA expc<>+400(SB)/8, $0x3f2a01a01a01a01a
DATA expc<>+408(SB)/8, $0x3f2a01a01a01a01a
DATA expc<>+416(SB)/8, $0x3f56c16c16c16c17 // c6 0.001388888888888889
DATA expc<>+424(SB)/8, $0x3f56c16c16c16c17
DATA expc<>+432(SB)/8, $0x3f56c16c16c16c17
DATA expc<>+440(SB)/8, $0x3f56c16c16c16c17
DATA expc<>+448(SB)/8, $0x3f81111111111111 // c5 0.008333333333333333
DATA expc<>+456(SB)/8, $0x3f81111111111111
DATA expc<>+464(SB)/8, $0x3f81111111111111
DATA expc<>+472(SB)/8, $0x3f81111111111111
DATA expc<>+480(SB)/8, $0x3fa5555555555555 // c4 0.041666666666666664
DATA expc<>+488(SB)/8, $0x3fa5555555555555
DATA expc<>+496(SB)/8, $0x3fa5555555555555
DATA expc<>+504(SB)/8, $0x3fa5555555555555
DATA expc<>+512(SB)/8, $0x3fc5555555555555 // c3 0.16666666666666666
DATA expc<>+520(SB)/8, $0x3fc5555555555555
DATA expc<>+528(SB)/8, $0x3fc5555555555555
DATA expc<>+536(SB)/8, $0x3fc5555555555555
DATA expc<>+544(SB)/8, $0x3fe0000000000000 // c2 0.5
DATA expc<>+552(SB)/8, $0x3fe0000000000000
DATA expc<>+560(SB)/8, $0x3fe0000000000000
DATA expc<>+568(SB)/8, $0x3fe0000000000000
DATA expc<>+576(SB)/8, $0x3ff0000000000000 // one 1.0
DATA expc<>+584(SB)/8, $0x3ff0000000000000
DATA expc<>+592(SB)/8, $0x3ff0000000000000
DATA expc<>+600(SB)/8, $0x3ff0000000000000
DATA expc<>+608(SB)/8, $1023 // the exponent bias
DATA expc<>+616(SB)/8, $1023
DATA expc<>+624(SB)/8, $1023
DATA expc<>+632(SB)/8, $1023
GLOBL expc<>(SB), RODATA|NOPTR, $640

// func expFMA(dst, src *float64, n int)
//
// dst[i] = exp(src[i]) for i < n, n a multiple of 4: x = k·ln 2 + r with
// |r| ≤ ln 2 / 2, e^r by its Taylor polynomial of degree 13 (remainder
// below 1e-17) in Horner's form with fused multiply-adds, times 2^k built
// in the exponent bits. x below ln(smallest normal) gives 0, x above 709
// gives e^709.
TEXT ·expFMA(SB), NOSPLIT, $0-24
	MOVQ dst+0(FP), DI
	MOVQ src+8(FP), SI
	MOVQ n+16(FP), CX
	SHRQ $2, CX

loop:
	TESTQ CX, CX
	JE    done
	VMOVUPD      (SI), Y0
	VMAXPD       expc<>+0(SB), Y0, Y1
	VMINPD       expc<>+32(SB), Y1, Y1
	VMOVUPD      expc<>+96(SB), Y2
	VFMADD231PD  expc<>+64(SB), Y1, Y2
	VSUBPD       expc<>+96(SB), Y2, Y3
	VFNMADD231PD expc<>+128(SB), Y3, Y1
	VFNMADD231PD expc<>+160(SB), Y3, Y1
	VMOVUPD      expc<>+192(SB), Y4
	VFMADD213PD  expc<>+224(SB), Y1, Y4
	VFMADD213PD  expc<>+256(SB), Y1, Y4
	VFMADD213PD  expc<>+288(SB), Y1, Y4
	VFMADD213PD  expc<>+320(SB), Y1, Y4
	VFMADD213PD  expc<>+352(SB), Y1, Y4
	VFMADD213PD  expc<>+384(SB), Y1, Y4
	VFMADD213PD  expc<>+416(SB), Y1, Y4
	VFMADD213PD  expc<>+448(SB), Y1, Y4
	VFMADD213PD  expc<>+480(SB), Y1, Y4
	VFMADD213PD  expc<>+512(SB), Y1, Y4
	VFMADD213PD  expc<>+544(SB), Y1, Y4
	VFMADD213PD  expc<>+576(SB), Y1, Y4
	VFMADD213PD  expc<>+576(SB), Y1, Y4
	VPADDQ       expc<>+608(SB), Y2, Y2
	VPSLLQ       $52, Y2, Y2
	VMULPD       Y2, Y4, Y4
	VCMPPD       $0x1d, expc<>+0(SB), Y0, Y5
	VANDPD       Y5, Y4, Y4
	VMOVUPD      Y4, (DI)
	ADDQ         $32, SI
	ADDQ         $32, DI
	DECQ         CX
	JMP          loop

done:
	VZEROUPPER
	RET
