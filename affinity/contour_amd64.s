//go:build !purego

#include "textflag.h"

// gaussianJet's separable passes with AVX2 (see jetHAVX2 and jetVAVX2 in
// kernels_amd64.go): four pixels at a time in float64 lanes, the float32
// samples widened exactly (VCVTPS2PD) and the horizontal results rounded
// to float32 as the Go conversion rounds them (VCVTPD2PS, to nearest),
// each lane doing the Go loops' multiplies and adds in their order (no
// fused multiply-add), so the results are theirs bit for bit. The
// coefficient table coef holds, for k = 0..r, g0(k), g1(k), g2(k) (24 bytes
// a k). The last four outputs end at n and may overlap the ones before;
// they are computed again to the same values.

// func jetHAVX2(line *float32, coef *float64, r int, o0 *float32, o1 *float32, o2 *float32, n int)
TEXT ·jetHAVX2(SB), NOSPLIT, $0-56
	MOVQ line+0(FP), SI
	MOVQ coef+8(FP), R10
	MOVQ r+16(FP), R11
	MOVQ o0+24(FP), R8
	MOVQ o1+32(FP), R9
	MOVQ o2+40(FP), DI
	MOVQ n+48(FP), CX
	SUBQ $4, CX
	SHLQ $2, CX // byte offset of the last four outputs
	XORQ BX, BX
	VBROADCASTSD 0(R10), Y10 // g0(0)
	VBROADCASTSD 16(R10), Y11 // g2(0)

hchunk:
	CMPQ BX, CX
	JGT htail
	XORQ DX, DX
	JMP hbody

htail:
	LEAQ 16(CX), AX
	CMPQ BX, AX
	JEQ hdone
	MOVQ CX, BX
	MOVQ $1, DX

hbody:
	LEAQ (SI)(BX*1), R12 // &line[x], then &line[x+k]
	VCVTPS2PD (R12), Y3
	VMULPD Y10, Y3, Y0 // t0 = g0(0)·c
	VXORPD Y1, Y1, Y1 // t1 = 0
	VMULPD Y11, Y3, Y2 // t2 = g2(0)·c
	LEAQ 24(R10), R15
	MOVQ R12, AX // &line[x-k]
	MOVQ R11, R13

hk:
	ADDQ $4, R12
	SUBQ $4, AX
	VCVTPS2PD (R12), Y3 // a = line[x+k]
	VCVTPS2PD (AX), Y4 // b = line[x-k]
	VADDPD Y4, Y3, Y5 // p = a + b
	VSUBPD Y4, Y3, Y6 // m = a - b
	VBROADCASTSD 0(R15), Y7
	VBROADCASTSD 8(R15), Y8
	VBROADCASTSD 16(R15), Y9
	VMULPD Y7, Y5, Y7
	VADDPD Y7, Y0, Y0 // t0 += g0(k)·p
	VMULPD Y8, Y6, Y8
	VADDPD Y8, Y1, Y1 // t1 += g1(k)·m
	VMULPD Y9, Y5, Y9
	VADDPD Y9, Y2, Y2 // t2 += g2(k)·p
	ADDQ $24, R15
	DECQ R13
	JNZ hk

	VCVTPD2PSY Y0, X0
	VMOVUPS X0, (R8)(BX*1)
	VCVTPD2PSY Y1, X1
	VMOVUPS X1, (R9)(BX*1)
	VCVTPD2PSY Y2, X2
	VMOVUPS X2, (DI)(BX*1)
	TESTQ DX, DX
	JNZ hdone
	ADDQ $16, BX
	JMP hchunk

hdone:
	VZEROUPPER
	RET

// tbl holds, for k = 1..r, the rows k above and k below (edge rows
// repeated): a, b, d of the row above, then a, b, d of the row below (six
// pointers, 48 bytes a k); a, b, d are the g0-, g1- and g2-filtered
// horizontal rows. Per lane:
//
//	ix = g0(0)·b, iy = 0, ixx = g0(0)·d, iyy = g2(0)·a, ixy = 0
//	ix += g0(k)·(b↓ + b↑), iy += g1(k)·(a↓ - a↑), ixx += g0(k)·(d↓ + d↑),
//	iyy += g2(k)·(a↓ + a↑), ixy += g1(k)·(b↓ - b↑)       k = 1..r

// func jetVAVX2(a *float32, b *float32, d *float32, tbl **float32, coef *float64, r int, ix *float64, iy *float64, ixx *float64, iyy *float64, ixy *float64, n int)
TEXT ·jetVAVX2(SB), NOSPLIT, $0-96
	MOVQ a+0(FP), SI
	MOVQ b+8(FP), DI
	MOVQ d+16(FP), R8
	MOVQ tbl+24(FP), R9
	MOVQ coef+32(FP), R10
	MOVQ r+40(FP), R11
	MOVQ n+88(FP), CX
	SUBQ $4, CX
	SHLQ $2, CX // float32 byte offset of the last four
	XORQ BX, BX

vchunk:
	CMPQ BX, CX
	JGT vtail
	XORQ DX, DX
	JMP vbody

vtail:
	LEAQ 16(CX), AX
	CMPQ BX, AX
	JEQ vdone
	MOVQ CX, BX
	MOVQ $1, DX

vbody:
	VBROADCASTSD 0(R10), Y5
	VBROADCASTSD 16(R10), Y7
	VCVTPS2PD (DI)(BX*1), Y0
	VMULPD Y5, Y0, Y0 // ix = g0(0)·b
	VCVTPS2PD (R8)(BX*1), Y2
	VMULPD Y5, Y2, Y2 // ixx = g0(0)·d
	VCVTPS2PD (SI)(BX*1), Y3
	VMULPD Y7, Y3, Y3 // iyy = g2(0)·a
	VXORPD Y1, Y1, Y1 // iy
	VXORPD Y4, Y4, Y4 // ixy
	MOVQ R9, R13
	LEAQ 24(R10), R15
	MOVQ R11, R12

vk:
	VBROADCASTSD 0(R15), Y5
	VBROADCASTSD 8(R15), Y6
	VBROADCASTSD 16(R15), Y7
	MOVQ 0(R13), AX
	VCVTPS2PD (AX)(BX*1), Y8 // a above
	MOVQ 8(R13), AX
	VCVTPS2PD (AX)(BX*1), Y9 // b above
	MOVQ 16(R13), AX
	VCVTPS2PD (AX)(BX*1), Y10 // d above
	MOVQ 24(R13), AX
	VCVTPS2PD (AX)(BX*1), Y11 // a below
	MOVQ 32(R13), AX
	VCVTPS2PD (AX)(BX*1), Y12 // b below
	MOVQ 40(R13), AX
	VCVTPS2PD (AX)(BX*1), Y13 // d below
	VADDPD Y9, Y12, Y14
	VMULPD Y5, Y14, Y14
	VADDPD Y14, Y0, Y0 // ix
	VSUBPD Y8, Y11, Y15
	VMULPD Y6, Y15, Y15
	VADDPD Y15, Y1, Y1 // iy
	VADDPD Y10, Y13, Y14
	VMULPD Y5, Y14, Y14
	VADDPD Y14, Y2, Y2 // ixx
	VADDPD Y8, Y11, Y15
	VMULPD Y7, Y15, Y15
	VADDPD Y15, Y3, Y3 // iyy
	VSUBPD Y9, Y12, Y14
	VMULPD Y6, Y14, Y14
	VADDPD Y14, Y4, Y4 // ixy
	ADDQ $48, R13
	ADDQ $24, R15
	DECQ R12
	JNZ vk

	MOVQ ix+48(FP), AX
	VMOVUPD Y0, (AX)(BX*2)
	MOVQ iy+56(FP), AX
	VMOVUPD Y1, (AX)(BX*2)
	MOVQ ixx+64(FP), AX
	VMOVUPD Y2, (AX)(BX*2)
	MOVQ iyy+72(FP), AX
	VMOVUPD Y3, (AX)(BX*2)
	MOVQ ixy+80(FP), AX
	VMOVUPD Y4, (AX)(BX*2)
	TESTQ DX, DX
	JNZ vdone
	ADDQ $16, BX
	JMP vchunk

vdone:
	VZEROUPPER
	RET

// EdgeEnergy's row with AVX2 (see edgeRowAVX2 in kernels_amd64.go): per
// lane, as the Go loop,
//
//	m = (ixx + iyy)·0.5, d = (ixx - iyy)·0.5, q = sqrt(d·d + ixy·ixy)
//	lam = s2·(|m| + q), g = ix·ix + iy·iy, out = float32(sqrt(ss·g + lam·lam))
//
// (x·0.5 is x/2 exactly; VSQRTPD rounds as math.Sqrt does). The last four
// outputs end at n and may overlap the ones before.

DATA edgeConst<>+0(SB)/8, $0.5
DATA edgeConst<>+8(SB)/8, $0x7fffffffffffffff
GLOBL edgeConst<>(SB), RODATA|NOPTR, $16

// func edgeRowAVX2(ix *float64, iy *float64, ixx *float64, iyy *float64, ixy *float64, out *float32, s2 float64, ss float64, n int)
TEXT ·edgeRowAVX2(SB), NOSPLIT, $0-72
	MOVQ ix+0(FP), SI
	MOVQ iy+8(FP), DI
	MOVQ ixx+16(FP), R8
	MOVQ iyy+24(FP), R9
	MOVQ ixy+32(FP), R10
	MOVQ out+40(FP), R11
	VBROADCASTSD s2+48(FP), Y12
	VBROADCASTSD ss+56(FP), Y13
	VBROADCASTSD edgeConst<>+0(SB), Y14
	VBROADCASTSD edgeConst<>+8(SB), Y15
	MOVQ n+64(FP), CX
	SUBQ $4, CX
	SHLQ $2, CX // float32 byte offset of the last four
	XORQ BX, BX

echunk:
	CMPQ BX, CX
	JGT etail
	XORQ DX, DX
	JMP ebody

etail:
	LEAQ 16(CX), AX
	CMPQ BX, AX
	JEQ edone
	MOVQ CX, BX
	MOVQ $1, DX

ebody:
	VMOVUPD (R8)(BX*2), Y0 // ixx
	VMOVUPD (R9)(BX*2), Y1 // iyy
	VADDPD Y1, Y0, Y2
	VMULPD Y14, Y2, Y2 // m
	VSUBPD Y1, Y0, Y3
	VMULPD Y14, Y3, Y3 // d
	VMULPD Y3, Y3, Y3 // d·d
	VMOVUPD (R10)(BX*2), Y4
	VMULPD Y4, Y4, Y4 // ixy·ixy
	VADDPD Y4, Y3, Y3
	VSQRTPD Y3, Y3 // q
	VANDPD Y15, Y2, Y2 // |m|
	VADDPD Y3, Y2, Y2
	VMULPD Y2, Y12, Y2 // lam = s2·(|m| + q)
	VMOVUPD (SI)(BX*2), Y5
	VMULPD Y5, Y5, Y5 // ix·ix
	VMOVUPD (DI)(BX*2), Y6
	VMULPD Y6, Y6, Y6 // iy·iy
	VADDPD Y6, Y5, Y5 // g
	VMULPD Y5, Y13, Y5 // ss·g
	VMULPD Y2, Y2, Y2 // lam·lam
	VADDPD Y2, Y5, Y5
	VSQRTPD Y5, Y5
	VCVTPD2PSY Y5, X5
	VMOVUPS X5, (R11)(BX*1)
	TESTQ DX, DX
	JNZ edone
	ADDQ $16, BX
	JMP echunk

edone:
	VZEROUPPER
	RET
