//go:build !purego

#include "textflag.h"

// stencil32Rows is the float32 kernel of the preconditioner's product
// (single.go): for each of rows consecutive rows r, with t advanced by
// r·m values and ws by r·k,
//
//	acc[r·8 + c] = Σ_f ws[f] · t[lm[f] + c]   (f = 0..k-1 in order)
//
// for the eight lanes c, one packed float32 multiply then one add per f
// (no fused multiply-add), so every lane is stencil32Go's sum bit for
// bit. Rows are taken four at a time, their sums independent chains;
// the rest one at a time. k must be at least 1.
//
// func stencil32Rows(t *float32, lm *int, k int, ws *float32, m int, acc *float32, rows int)
TEXT ·stencil32Rows(SB), NOSPLIT, $0-56
	MOVQ t+0(FP), SI
	MOVQ k+16(FP), R10
	SHLQ $2, R10          // k·4: bytes between two rows of ws
	MOVQ ws+24(FP), R8
	MOVQ m+32(FP), R9
	SHLQ $2, R9           // m·4: bytes between two rows of t
	MOVQ acc+40(FP), R11
	MOVQ rows+48(FP), R13
	LEAQ (R9)(R9*2), R12  // 3·m·4
	LEAQ (R10)(R10*2), DX // 3·k·4

quad:
	CMPQ R13, $4
	JLT  one
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3
	MOVQ lm+8(FP), DI
	MOVQ R8, BX
	MOVQ k+16(FP), CX

quadloop:
	MOVQ (DI), AX
	LEAQ (SI)(AX*4), AX
	VBROADCASTSS (BX), Y4
	VMULPS (AX), Y4, Y4
	VADDPS Y4, Y0, Y0
	VBROADCASTSS (BX)(R10*1), Y5
	VMULPS (AX)(R9*1), Y5, Y5
	VADDPS Y5, Y1, Y1
	VBROADCASTSS (BX)(R10*2), Y6
	VMULPS (AX)(R9*2), Y6, Y6
	VADDPS Y6, Y2, Y2
	VBROADCASTSS (BX)(DX*1), Y7
	VMULPS (AX)(R12*1), Y7, Y7
	VADDPS Y7, Y3, Y3
	ADDQ $8, DI
	ADDQ $4, BX
	DECQ CX
	JNE  quadloop

	VMOVUPS Y0, (R11)
	VMOVUPS Y1, 32(R11)
	VMOVUPS Y2, 64(R11)
	VMOVUPS Y3, 96(R11)
	ADDQ $128, R11
	LEAQ (SI)(R9*4), SI
	LEAQ (R8)(R10*4), R8
	SUBQ $4, R13
	JMP  quad

one:
	TESTQ R13, R13
	JEQ  done
	VXORPS Y0, Y0, Y0
	MOVQ lm+8(FP), DI
	MOVQ R8, BX
	MOVQ k+16(FP), CX

oneloop:
	MOVQ (DI), AX
	LEAQ (SI)(AX*4), AX
	VBROADCASTSS (BX), Y4
	VMULPS (AX), Y4, Y4
	VADDPS Y4, Y0, Y0
	ADDQ $8, DI
	ADDQ $4, BX
	DECQ CX
	JNE  oneloop

	VMOVUPS Y0, (R11)
	ADDQ $32, R11
	ADDQ R9, SI
	ADDQ R10, R8
	DECQ R13
	JMP  one

done:
	VZEROUPPER
	RET

// csr32Rows is the float32 kernel of the preconditioner's products on
// compressed rows (single.go, csr32): for each of rows rows r, from
// rowPtr[r] to rowPtr[r+1] (absolute places in col and wt),
//
//	acc[r·8 + c] = (a0 + a1) + (a2 + a3),   a_q = Σ wt[p]·t[col[p]·m + c]
//
// over the row's entries whose place from the row's first is q modulo
// 4, each in order: one packed float32 multiply then one add an entry
// (no fused multiply-add), so every lane is csr32's Go loop bit for bit.
//
// func csr32Rows(t *float32, rowPtr *int, col *int32, wt *float32, m int, acc *float32, rows int)
TEXT ·csr32Rows(SB), NOSPLIT, $0-56
	MOVQ t+0(FP), SI
	MOVQ rowPtr+8(FP), DI
	MOVQ col+16(FP), R8
	MOVQ wt+24(FP), R10
	MOVQ m+32(FP), R9
	SHLQ $2, R9 // m·4: bytes between two rows of t
	MOVQ acc+40(FP), R11
	MOVQ rows+48(FP), R13

crow:
	TESTQ R13, R13
	JEQ   cdone
	MOVQ  (DI), BX  // p
	MOVQ  8(DI), CX // the row's end
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3

cquad:
	LEAQ 4(BX), AX
	CMPQ AX, CX
	JGT  crest
	MOVLQSX (R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS (R10)(BX*4), Y4
	VMULPS  (SI)(AX*1), Y4, Y4
	VADDPS  Y4, Y0, Y0
	MOVLQSX 4(R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS 4(R10)(BX*4), Y5
	VMULPS  (SI)(AX*1), Y5, Y5
	VADDPS  Y5, Y1, Y1
	MOVLQSX 8(R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS 8(R10)(BX*4), Y6
	VMULPS  (SI)(AX*1), Y6, Y6
	VADDPS  Y6, Y2, Y2
	MOVLQSX 12(R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS 12(R10)(BX*4), Y7
	VMULPS  (SI)(AX*1), Y7, Y7
	VADDPS  Y7, Y3, Y3
	ADDQ    $4, BX
	JMP     cquad

crest:
	// Up to three entries left: the first three partial sums in turn.
	CMPQ BX, CX
	JGE  cfin
	MOVLQSX (R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS (R10)(BX*4), Y4
	VMULPS  (SI)(AX*1), Y4, Y4
	VADDPS  Y4, Y0, Y0
	INCQ    BX
	CMPQ    BX, CX
	JGE     cfin
	MOVLQSX (R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS (R10)(BX*4), Y5
	VMULPS  (SI)(AX*1), Y5, Y5
	VADDPS  Y5, Y1, Y1
	INCQ    BX
	CMPQ    BX, CX
	JGE     cfin
	MOVLQSX (R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS (R10)(BX*4), Y6
	VMULPS  (SI)(AX*1), Y6, Y6
	VADDPS  Y6, Y2, Y2

cfin:
	VADDPS  Y1, Y0, Y0
	VADDPS  Y3, Y2, Y2
	VADDPS  Y2, Y0, Y0
	VMOVUPS Y0, (R11)
	ADDQ    $32, R11
	ADDQ    $8, DI
	DECQ    R13
	JMP     crow

cdone:
	VZEROUPPER
	RET

// csr32Rows1 is csr32Rows with one sum a lane: acc[r·8 + c] = Σ_p
// wt[p]·t[col[p]·m + c] over the row's entries in order (applyL32 on the
// input graph in compressed rows, whose sums are the stencil form's).
//
// func csr32Rows1(t *float32, rowPtr *int, col *int32, wt *float32, m int, acc *float32, rows int)
TEXT ·csr32Rows1(SB), NOSPLIT, $0-56
	MOVQ t+0(FP), SI
	MOVQ rowPtr+8(FP), DI
	MOVQ col+16(FP), R8
	MOVQ wt+24(FP), R10
	MOVQ m+32(FP), R9
	SHLQ $2, R9
	MOVQ acc+40(FP), R11
	MOVQ rows+48(FP), R13

srow:
	TESTQ R13, R13
	JEQ   sdone
	MOVQ  (DI), BX
	MOVQ  8(DI), CX
	VXORPS Y0, Y0, Y0

sloop:
	CMPQ BX, CX
	JGE  sfin
	MOVLQSX (R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS (R10)(BX*4), Y4
	VMULPS  (SI)(AX*1), Y4, Y4
	VADDPS  Y4, Y0, Y0
	INCQ    BX
	JMP     sloop

sfin:
	VMOVUPS Y0, (R11)
	ADDQ    $32, R11
	ADDQ    $8, DI
	DECQ    R13
	JMP     srow

sdone:
	VZEROUPPER
	RET
