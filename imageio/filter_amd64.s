//go:build !purego

#include "textflag.h"

// The Up, Sub, None and Average candidates of pngFilter with AVX2 (see
// filter_amd64.go), thirty-two bytes at a time: the filtered byte is a
// difference modulo 256 (VPSUBB) and its |int8| (VPABSB: -128 gives 128)
// is summed with VPSADBW into four 64-bit lanes, added at the end.

// func subAbsAVX2(x, y, out *byte, n int) int
TEXT ·subAbsAVX2(SB), NOSPLIT, $0-40
	MOVQ x+0(FP), SI
	MOVQ y+8(FP), R8
	MOVQ out+16(FP), DI
	MOVQ n+24(FP), CX
	XORQ BX, BX
	VPXOR Y15, Y15, Y15 // zero, for VPSADBW
	VPXOR Y14, Y14, Y14 // the sums

subloop:
	VMOVDQU (SI)(BX*1), Y0
	VMOVDQU (R8)(BX*1), Y1
	VPSUBB Y1, Y0, Y0 // x - y
	VMOVDQU Y0, (DI)(BX*1)
	VPABSB Y0, Y0
	VPSADBW Y15, Y0, Y0
	VPADDQ Y0, Y14, Y14
	ADDQ $32, BX
	CMPQ BX, CX
	JLT subloop

	VEXTRACTI128 $1, Y14, X0
	VPADDQ X0, X14, X14
	VPEXTRQ $1, X14, AX
	VMOVQ X14, DX
	ADDQ DX, AX
	MOVQ AX, ret+32(FP)
	VZEROUPPER
	RET

// func absSumAVX2(x *byte, n int) int
TEXT ·absSumAVX2(SB), NOSPLIT, $0-24
	MOVQ x+0(FP), SI
	MOVQ n+8(FP), CX
	XORQ BX, BX
	VPXOR Y15, Y15, Y15
	VPXOR Y14, Y14, Y14

absloop:
	VMOVDQU (SI)(BX*1), Y0
	VPABSB Y0, Y0
	VPSADBW Y15, Y0, Y0
	VPADDQ Y0, Y14, Y14
	ADDQ $32, BX
	CMPQ BX, CX
	JLT absloop

	VEXTRACTI128 $1, Y14, X0
	VPADDQ X0, X14, X14
	VPEXTRQ $1, X14, AX
	VMOVQ X14, DX
	ADDQ DX, AX
	MOVQ AX, ret+16(FP)
	VZEROUPPER
	RET

// The Average predictor floor((left + above)/2) is VPAVGB's rounded-up
// mean (left + above + 1) >> 1 less the low bit of left XOR above.

// func avgAbsAVX2(cur, left, above, out *byte, n int) int
TEXT ·avgAbsAVX2(SB), NOSPLIT, $0-48
	MOVQ cur+0(FP), SI
	MOVQ left+8(FP), R8
	MOVQ above+16(FP), R9
	MOVQ out+24(FP), DI
	MOVQ n+32(FP), CX
	XORQ BX, BX
	VPXOR Y15, Y15, Y15
	VPXOR Y14, Y14, Y14
	MOVQ $0x0101010101010101, AX
	VMOVQ AX, X13
	VPBROADCASTQ X13, Y13 // a one in every byte

avgloop:
	VMOVDQU (R8)(BX*1), Y1 // left
	VMOVDQU (R9)(BX*1), Y2 // above
	VPAVGB Y2, Y1, Y3
	VPXOR Y2, Y1, Y4
	VPAND Y13, Y4, Y4
	VPSUBB Y4, Y3, Y3 // floor((left + above)/2)
	VMOVDQU (SI)(BX*1), Y0
	VPSUBB Y3, Y0, Y0 // cur - predictor
	VMOVDQU Y0, (DI)(BX*1)
	VPABSB Y0, Y0
	VPSADBW Y15, Y0, Y0
	VPADDQ Y0, Y14, Y14
	ADDQ $32, BX
	CMPQ BX, CX
	JLT avgloop

	VEXTRACTI128 $1, Y14, X0
	VPADDQ X0, X14, X14
	VPEXTRQ $1, X14, AX
	VMOVQ X14, DX
	ADDQ DX, AX
	MOVQ AX, ret+40(FP)
	VZEROUPPER
	RET

// The gray of the overlay, eight samples at a time: each float32 widened
// to float64 (exact), clamped to [0, 1] by VMAXPD against 0 (which gives
// 0 for NaN, its second operand) and VMINPD against 1, times 255 (exact:
// 24 by 8 significant bits), plus 0.5 (exact from 0.25 up, and below it
// the sum stays under 1), truncated: round8's rounding, half away from
// zero.

// func grayBytesAVX2(src *float32, dst *byte, n int)
TEXT ·grayBytesAVX2(SB), NOSPLIT, $0-24
	MOVQ src+0(FP), SI
	MOVQ dst+8(FP), DI
	MOVQ n+16(FP), CX
	XORQ BX, BX
	VXORPD Y15, Y15, Y15 // 0
	MOVQ $0x3ff0000000000000, AX // 1.0
	VMOVQ AX, X14
	VBROADCASTSD X14, Y14
	MOVQ $0x406fe00000000000, AX // 255.0
	VMOVQ AX, X13
	VBROADCASTSD X13, Y13
	MOVQ $0x3fe0000000000000, AX // 0.5
	VMOVQ AX, X12
	VBROADCASTSD X12, Y12

grayloop:
	VCVTPS2PD (SI)(BX*4), Y0
	VCVTPS2PD 16(SI)(BX*4), Y1
	VMAXPD Y15, Y0, Y0 // v > 0 ? v : 0 (0 for NaN)
	VMAXPD Y15, Y1, Y1
	VMINPD Y14, Y0, Y0 // v < 1 ? v : 1
	VMINPD Y14, Y1, Y1
	VMULPD Y13, Y0, Y0
	VMULPD Y13, Y1, Y1
	VADDPD Y12, Y0, Y0
	VADDPD Y12, Y1, Y1
	VCVTTPD2DQY Y0, X0
	VCVTTPD2DQY Y1, X1
	VPACKSSDW X1, X0, X0
	VPACKUSWB X0, X0, X0
	VMOVQ X0, (DI)(BX*1)
	ADDQ $8, BX
	CMPQ BX, CX
	JLT grayloop

	VZEROUPPER
	RET
