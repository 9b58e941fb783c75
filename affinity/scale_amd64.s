//go:build !purego

#include "textflag.h"

// symTaps with AVX2 (see symTapsAVX2 in kernels_amd64.go). For the eight
// outputs at byte offset BX, with c = src[r], a_j = src[r-j], b_j = src[r+j]:
//
//	o = k0·c + k1·(a_1 + b_1)
//	o = o + (k_j·(a_j + b_j) + k_(j+1)·(a_(j+1) + b_(j+1)))   j = 2, 4, ... while j+1 <= r
//	o = o + k_r·(a_r + b_r)                                   if r is even
//
// the order of the Go loops of symTaps, so the sums are theirs bit for
// bit. src points at the first of 2r+1 slice headers (24 bytes each; the
// data pointer first).

// func symTapsAVX2(out *float32, src *[]float32, k *float32, r int, n int)
TEXT ·symTapsAVX2(SB), NOSPLIT, $0-40
	MOVQ out+0(FP), R8
	MOVQ src+8(FP), SI
	MOVQ k+16(FP), DI
	MOVQ r+24(FP), R9
	MOVQ n+32(FP), CX
	SUBQ $8, CX
	SHLQ $2, CX // byte offset of the last eight outputs
	// R11: the centre row's header, src + 24·r
	LEAQ (R9)(R9*2), R11
	SHLQ $3, R11
	ADDQ SI, R11
	MOVQ (R11), R15 // centre row
	VBROADCASTSS 0(DI), Y14 // k0
	VBROADCASTSS 4(DI), Y15 // k1
	XORQ BX, BX

chunk:
	CMPQ BX, CX
	JGT tail
	XORQ DX, DX
	JMP body

tail:
	// Past the last full group of eight: unless it ended at n, do the
	// eight ending at n, then stop.
	LEAQ 32(CX), AX
	CMPQ BX, AX
	JEQ done
	MOVQ CX, BX
	MOVQ $1, DX

body:
	VMOVUPS (R15)(BX*1), Y0
	VMULPS Y14, Y0, Y0
	MOVQ -24(R11), R12 // a_1
	MOVQ 24(R11), R13  // b_1
	VMOVUPS (R12)(BX*1), Y1
	VADDPS (R13)(BX*1), Y1, Y1
	VMULPS Y15, Y1, Y1
	VADDPS Y1, Y0, Y0
	// j = 2, 4, ... while j+1 <= r
	MOVQ $2, R10
pairs:
	LEAQ 1(R10), AX
	CMPQ AX, R9
	JGT single
	LEAQ (R10)(R10*2), AX
	SHLQ $3, AX // 24·j
	MOVQ R11, R12
	SUBQ AX, R12
	MOVQ (R12), R12 // a_j
	MOVQ (R11)(AX*1), R13 // b_j
	VMOVUPS (R12)(BX*1), Y1
	VADDPS (R13)(BX*1), Y1, Y1
	VBROADCASTSS (DI)(R10*4), Y3
	VMULPS Y3, Y1, Y1
	ADDQ $24, AX // 24·(j+1)
	MOVQ R11, R12
	SUBQ AX, R12
	MOVQ (R12), R12 // a_(j+1)
	MOVQ (R11)(AX*1), R13 // b_(j+1)
	VMOVUPS (R12)(BX*1), Y2
	VADDPS (R13)(BX*1), Y2, Y2
	VBROADCASTSS 4(DI)(R10*4), Y3
	VMULPS Y3, Y2, Y2
	VADDPS Y2, Y1, Y1
	VADDPS Y1, Y0, Y0
	ADDQ $2, R10
	JMP pairs

single:
	CMPQ R10, R9
	JNE store
	LEAQ (R10)(R10*2), AX
	SHLQ $3, AX
	MOVQ R11, R12
	SUBQ AX, R12
	MOVQ (R12), R12
	MOVQ (R11)(AX*1), R13
	VMOVUPS (R12)(BX*1), Y1
	VADDPS (R13)(BX*1), Y1, Y1
	VBROADCASTSS (DI)(R10*4), Y3
	VMULPS Y3, Y1, Y1
	VADDPS Y1, Y0, Y0

store:
	VMOVUPS Y0, (R8)(BX*1)
	TESTQ DX, DX
	JNZ done
	ADDQ $32, BX
	JMP chunk

done:
	VZEROUPPER
	RET

// normLaplacian's row with AVX2 (see normLapAVX2 in kernels_amd64.go): for
// the eight outputs at byte offset BX, with l2, l1, c, r1, r2 the padded
// row at offsets 0..4 and u2, u1, d1, d2 the rows above and below,
//
//	o = tf · ((16·(((l1 + r1) + u1) + d1) - (((l2 + r2) + u2) + d2)) - 60·c)
//
// the Go loop's operations in its order.

DATA lapConst<>+0(SB)/4, $16.0
DATA lapConst<>+4(SB)/4, $60.0
GLOBL lapConst<>(SB), RODATA|NOPTR, $8

// func normLapAVX2(out *float32, pad *float32, u2 *float32, u1 *float32, d1 *float32, d2 *float32, tf float32, n int)
TEXT ·normLapAVX2(SB), NOSPLIT, $0-64
	MOVQ out+0(FP), R8
	MOVQ pad+8(FP), SI
	MOVQ u2+16(FP), R9
	MOVQ u1+24(FP), R10
	MOVQ d1+32(FP), R11
	MOVQ d2+40(FP), R12
	VBROADCASTSS tf+48(FP), Y13
	MOVQ n+56(FP), CX
	VBROADCASTSS lapConst<>+0(SB), Y14
	VBROADCASTSS lapConst<>+4(SB), Y15
	SUBQ $8, CX
	SHLQ $2, CX // byte offset of the last eight outputs
	XORQ BX, BX

lchunk:
	CMPQ BX, CX
	JGT ltail
	XORQ DX, DX
	JMP lbody

ltail:
	LEAQ 32(CX), AX
	CMPQ BX, AX
	JEQ ldone
	MOVQ CX, BX
	MOVQ $1, DX

lbody:
	LEAQ (SI)(BX*1), AX
	VMOVUPS 4(AX), Y0 // l1
	VADDPS 12(AX), Y0, Y0 // + r1
	VADDPS (R10)(BX*1), Y0, Y0 // + u1
	VADDPS (R11)(BX*1), Y0, Y0 // + d1
	VMULPS Y14, Y0, Y0 // 16·
	VMOVUPS (AX), Y1 // l2
	VADDPS 16(AX), Y1, Y1 // + r2
	VADDPS (R9)(BX*1), Y1, Y1 // + u2
	VADDPS (R12)(BX*1), Y1, Y1 // + d2
	VSUBPS Y1, Y0, Y0
	VMOVUPS 8(AX), Y2 // c
	VMULPS Y15, Y2, Y2 // 60·c
	VSUBPS Y2, Y0, Y0
	VMULPS Y13, Y0, Y0 // tf·
	VMOVUPS Y0, (R8)(BX*1)
	TESTQ DX, DX
	JNZ ldone
	ADDQ $32, BX
	JMP lchunk

ldone:
	VZEROUPPER
	RET
