//go:build !purego

#include "textflag.h"

// SLIC's single-plane assignment row with AVX2 (see kernels_amd64.go). Every
// lane does the Go loop's operations in its order: d = f - fc, d·d, + dx2,
// + dy2 (no fused multiply-add); the bits of D and of the stored distance
// are compared as signed 32-bit integers, which orders them as the Go
// code's unsigned comparison does since neither has its sign bit set
// (D >= +0, not NaN; the stored values are such D or +Inf). The last
// n mod 8 pixels are done with masked loads and stores (VMASKMOVPS,
// VPMASKMOVD), which neither read nor write the lanes past n.

// slicMask holds eight -1 then eight 0: the eight dwords from
// slicMask + 4·(8 - r) select the first r lanes.
DATA slicMask<>+0(SB)/4, $-1
DATA slicMask<>+4(SB)/4, $-1
DATA slicMask<>+8(SB)/4, $-1
DATA slicMask<>+12(SB)/4, $-1
DATA slicMask<>+16(SB)/4, $-1
DATA slicMask<>+20(SB)/4, $-1
DATA slicMask<>+24(SB)/4, $-1
DATA slicMask<>+28(SB)/4, $-1
DATA slicMask<>+32(SB)/4, $0
DATA slicMask<>+36(SB)/4, $0
DATA slicMask<>+40(SB)/4, $0
DATA slicMask<>+44(SB)/4, $0
DATA slicMask<>+48(SB)/4, $0
DATA slicMask<>+52(SB)/4, $0
DATA slicMask<>+56(SB)/4, $0
DATA slicMask<>+60(SB)/4, $0
GLOBL slicMask<>(SB), RODATA|NOPTR, $64

// func slicRowAVX2(f *float32, dx2 *float32, dist *uint32, lab *int32, n int, fc float32, dy2 float32, label int32)
TEXT ·slicRowAVX2(SB), NOSPLIT, $0-52
	MOVQ f+0(FP), SI
	MOVQ dx2+8(FP), DX
	MOVQ dist+16(FP), DI
	MOVQ lab+24(FP), R8
	MOVQ n+32(FP), CX
	VBROADCASTSS fc+40(FP), Y0
	VBROADCASTSS dy2+44(FP), Y1
	MOVL label+48(FP), AX
	VMOVD AX, X2
	VPBROADCASTD X2, Y2

loop:
	CMPQ CX, $8
	JLT tail
	VMOVUPS (SI), Y3
	VSUBPS Y0, Y3, Y3
	VMULPS Y3, Y3, Y3
	VADDPS (DX), Y3, Y3
	VADDPS Y1, Y3, Y3
	VMOVDQU (DI), Y4
	VPCMPGTD Y3, Y4, Y5
	VPBLENDVB Y5, Y3, Y4, Y4
	VMOVDQU Y4, (DI)
	VMOVDQU (R8), Y6
	VPBLENDVB Y5, Y2, Y6, Y6
	VMOVDQU Y6, (R8)
	ADDQ $32, SI
	ADDQ $32, DX
	ADDQ $32, DI
	ADDQ $32, R8
	SUBQ $8, CX
	JMP loop

tail:
	TESTQ CX, CX
	JZ done
	LEAQ slicMask<>+32(SB), AX
	SHLQ $2, CX
	SUBQ CX, AX
	VMOVDQU (AX), Y7 // the first n mod 8 lanes
	VMASKMOVPS (SI), Y7, Y3
	VSUBPS Y0, Y3, Y3
	VMULPS Y3, Y3, Y3
	VMASKMOVPS (DX), Y7, Y8
	VADDPS Y8, Y3, Y3
	VADDPS Y1, Y3, Y3
	VPMASKMOVD (DI), Y7, Y4
	VPCMPGTD Y3, Y4, Y5
	VPAND Y7, Y5, Y5
	VPBLENDVB Y5, Y3, Y4, Y4
	VPMASKMOVD Y4, Y7, (DI)
	VPMASKMOVD (R8), Y7, Y6
	VPBLENDVB Y5, Y2, Y6, Y6
	VPMASKMOVD Y6, Y7, (R8)

done:
	VZEROUPPER
	RET
