//go:build !purego

#include "textflag.h"

// The Paeth candidate of pngFilter with AVX2 (see paeth_amd64.go), sixteen
// bytes at a time widened to 16-bit lanes: pa = |b - c|, pb = |a - c|,
// pc = |(b - c) + (a - c)|; the predictor is c, replaced by b where
// pb <= pc, then by a where pa <= min(pb, pc), as in the Go loop; the
// filtered byte is cur - predictor modulo 256 and its |int8| (VPABSB:
// -128 gives 128) is summed with VPSADBW.

// func paethAVX2(cur, a, b, c, out *byte, n int) int
TEXT ·paethAVX2(SB), NOSPLIT, $0-56
	MOVQ cur+0(FP), SI
	MOVQ a+8(FP), R8
	MOVQ b+16(FP), R9
	MOVQ c+24(FP), R10
	MOVQ out+32(FP), DI
	MOVQ n+40(FP), CX
	XORQ BX, BX
	VPXOR X15, X15, X15 // zero, for VPSADBW
	VPXOR X14, X14, X14 // the sums

loop:
	VPMOVZXBW (R8)(BX*1), Y0 // a
	VPMOVZXBW (R9)(BX*1), Y1 // b
	VPMOVZXBW (R10)(BX*1), Y2 // c
	VPSUBW Y2, Y1, Y3 // b - c
	VPABSW Y3, Y4 // pa
	VPSUBW Y2, Y0, Y5 // a - c
	VPABSW Y5, Y6 // pb
	VPADDW Y5, Y3, Y7
	VPABSW Y7, Y7 // pc
	VPCMPGTW Y7, Y6, Y8 // pb > pc
	VPBLENDVB Y8, Y2, Y1, Y9 // pb > pc ? c : b
	VPMINSW Y7, Y6, Y10 // min(pb, pc)
	VPCMPGTW Y10, Y4, Y11 // pa > min(pb, pc)
	VPBLENDVB Y11, Y9, Y0, Y12 // that ? (b or c) : a
	VPACKUSWB Y12, Y12, Y12 // bytes 0-7 in qword 0, 8-15 in qword 2
	VPERMQ $0x08, Y12, Y12
	VMOVDQU (SI)(BX*1), X13
	VPSUBB X12, X13, X13 // cur - predictor
	VMOVDQU X13, (DI)(BX*1)
	VPABSB X13, X13
	VPSADBW X15, X13, X13
	VPADDQ X13, X14, X14
	ADDQ $16, BX
	CMPQ BX, CX
	JLT loop

	VPEXTRQ $1, X14, AX
	VMOVQ X14, DX
	ADDQ DX, AX
	MOVQ AX, ret+48(FP)
	VZEROUPPER
	RET
