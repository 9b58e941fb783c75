//go:build !purego

#include "textflag.h"

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

// stencil32RowsY is the float32 kernel of the preconditioner's product on
// the stencil form (single.go): for each of rows rows r (t advanced by
// r·m values, ws by r·k, s by r, x and y by r·m float64s),
//
//	acc[c] = Σ_f ws[f] · t[lm[f] + c]   (f = 0..k-1 in order, float32)
//	y[c]   = x[c] - s · float64(acc[c])   for the lanes c with mask[c] set
//
// (mask: eight int64 lanes, all ones for the columns of the group, zero
// past them; x and y are neither read nor written there), the Go loop of
// stencilOp.mulRows32 on stencil32Go's sums, bit for bit: the float32 sum
// converted exactly, one float64 multiply, one subtraction.
//
// func stencil32RowsY(t *float32, lm *int, k int, ws *float32, m int, s *float64, x *float64, y *float64, mask *int64, rows int)
TEXT ·stencil32RowsY(SB), NOSPLIT, $8-80
	MOVQ t+0(FP), SI
	MOVQ k+16(FP), R10
	SHLQ $2, R10          // k·4: bytes between two rows of ws
	MOVQ ws+24(FP), R8
	MOVQ m+32(FP), R9
	SHLQ $2, R9           // m·4: bytes between two rows of t
	MOVQ s+40(FP), R14
	MOVQ x+48(FP), R11
	MOVQ y+56(FP), AX
	MOVQ AX, 0(SP)        // y of the current row
	MOVQ mask+64(FP), AX
	VMOVDQU (AX), Y13
	VMOVDQU 32(AX), Y14
	MOVQ rows+72(FP), R13
	LEAQ (R9)(R9*2), R12  // 3·m·4
	LEAQ (R10)(R10*2), DX // 3·k·4

yquad:
	CMPQ R13, $4
	JLT  yone
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3
	MOVQ lm+8(FP), DI
	MOVQ R8, BX
	MOVQ k+16(FP), CX

yquadloop:
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
	JNE  yquadloop

	// The four rows' results: x and y advance by m float64s (2·R9
	// bytes) a row.
	MOVQ 0(SP), CX
	MOVQ R11, AX
	VCVTPS2PD X0, Y8
	VEXTRACTF128 $1, Y0, X9
	VCVTPS2PD X9, Y9
	VBROADCASTSD (R14), Y10
	VMULPD Y10, Y8, Y8
	VMULPD Y10, Y9, Y9
	VMASKMOVPD (AX), Y13, Y11
	VSUBPD Y8, Y11, Y11
	VMASKMOVPD Y11, Y13, (CX)
	VMASKMOVPD 32(AX), Y14, Y12
	VSUBPD Y9, Y12, Y12
	VMASKMOVPD Y12, Y14, 32(CX)
	LEAQ (AX)(R9*2), AX
	LEAQ (CX)(R9*2), CX
	VCVTPS2PD X1, Y8
	VEXTRACTF128 $1, Y1, X9
	VCVTPS2PD X9, Y9
	VBROADCASTSD 8(R14), Y10
	VMULPD Y10, Y8, Y8
	VMULPD Y10, Y9, Y9
	VMASKMOVPD (AX), Y13, Y11
	VSUBPD Y8, Y11, Y11
	VMASKMOVPD Y11, Y13, (CX)
	VMASKMOVPD 32(AX), Y14, Y12
	VSUBPD Y9, Y12, Y12
	VMASKMOVPD Y12, Y14, 32(CX)
	LEAQ (AX)(R9*2), AX
	LEAQ (CX)(R9*2), CX
	VCVTPS2PD X2, Y8
	VEXTRACTF128 $1, Y2, X9
	VCVTPS2PD X9, Y9
	VBROADCASTSD 16(R14), Y10
	VMULPD Y10, Y8, Y8
	VMULPD Y10, Y9, Y9
	VMASKMOVPD (AX), Y13, Y11
	VSUBPD Y8, Y11, Y11
	VMASKMOVPD Y11, Y13, (CX)
	VMASKMOVPD 32(AX), Y14, Y12
	VSUBPD Y9, Y12, Y12
	VMASKMOVPD Y12, Y14, 32(CX)
	LEAQ (AX)(R9*2), AX
	LEAQ (CX)(R9*2), CX
	VCVTPS2PD X3, Y8
	VEXTRACTF128 $1, Y3, X9
	VCVTPS2PD X9, Y9
	VBROADCASTSD 24(R14), Y10
	VMULPD Y10, Y8, Y8
	VMULPD Y10, Y9, Y9
	VMASKMOVPD (AX), Y13, Y11
	VSUBPD Y8, Y11, Y11
	VMASKMOVPD Y11, Y13, (CX)
	VMASKMOVPD 32(AX), Y14, Y12
	VSUBPD Y9, Y12, Y12
	VMASKMOVPD Y12, Y14, 32(CX)
	LEAQ (AX)(R9*2), R11
	LEAQ (CX)(R9*2), CX
	MOVQ CX, 0(SP)
	ADDQ $32, R14
	LEAQ (SI)(R9*4), SI
	LEAQ (R8)(R10*4), R8
	SUBQ $4, R13
	JMP  yquad

yone:
	TESTQ R13, R13
	JEQ   ydone
	VXORPS Y0, Y0, Y0
	MOVQ  lm+8(FP), DI
	MOVQ  R8, BX
	MOVQ  k+16(FP), CX

yoneloop:
	MOVQ (DI), AX
	LEAQ (SI)(AX*4), AX
	VBROADCASTSS (BX), Y4
	VMULPS (AX), Y4, Y4
	VADDPS Y4, Y0, Y0
	ADDQ $8, DI
	ADDQ $4, BX
	DECQ CX
	JNE  yoneloop

	MOVQ 0(SP), CX
	VCVTPS2PD X0, Y8
	VEXTRACTF128 $1, Y0, X9
	VCVTPS2PD X9, Y9
	VBROADCASTSD (R14), Y10
	VMULPD Y10, Y8, Y8
	VMULPD Y10, Y9, Y9
	VMASKMOVPD (R11), Y13, Y11
	VSUBPD Y8, Y11, Y11
	VMASKMOVPD Y11, Y13, (CX)
	VMASKMOVPD 32(R11), Y14, Y12
	VSUBPD Y9, Y12, Y12
	VMASKMOVPD Y12, Y14, 32(CX)
	LEAQ (R11)(R9*2), R11
	LEAQ (CX)(R9*2), CX
	MOVQ CX, 0(SP)
	ADDQ $8, R14
	ADDQ R9, SI
	ADDQ R10, R8
	DECQ R13
	JMP  yone

ydone:
	VZEROUPPER
	RET

// csr32RowsY is csr32Rows with each row's result written to y instead of
// acc: y[c] = x[c] - s·float64((a0 + a1) + (a2 + a3)) for the lanes c with
// mask[c] set (x and y advanced by m float64s a row, s by one), the Go
// loop of level.mulRows32 on csr32's partial sums bit for bit.
//
// func csr32RowsY(t *float32, rowPtr *int, col *int32, wt *float32, m int, s *float64, x *float64, y *float64, mask *int64, rows int)
TEXT ·csr32RowsY(SB), NOSPLIT, $0-80
	MOVQ t+0(FP), SI
	MOVQ rowPtr+8(FP), DI
	MOVQ col+16(FP), R8
	MOVQ wt+24(FP), R10
	MOVQ m+32(FP), R9
	SHLQ $2, R9 // m·4: bytes between two rows of t
	MOVQ s+40(FP), R14
	MOVQ x+48(FP), R11
	MOVQ y+56(FP), R12
	MOVQ mask+64(FP), AX
	VMOVDQU (AX), Y13
	VMOVDQU 32(AX), Y14
	MOVQ rows+72(FP), R13

yrow:
	TESTQ R13, R13
	JEQ   yrdone
	MOVQ  (DI), BX
	MOVQ  8(DI), CX
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3

yrquad:
	LEAQ 4(BX), AX
	CMPQ AX, CX
	JGT  yrrest
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
	JMP     yrquad

yrrest:
	CMPQ BX, CX
	JGE  yrfin
	MOVLQSX (R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS (R10)(BX*4), Y4
	VMULPS  (SI)(AX*1), Y4, Y4
	VADDPS  Y4, Y0, Y0
	INCQ    BX
	CMPQ    BX, CX
	JGE     yrfin
	MOVLQSX (R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS (R10)(BX*4), Y5
	VMULPS  (SI)(AX*1), Y5, Y5
	VADDPS  Y5, Y1, Y1
	INCQ    BX
	CMPQ    BX, CX
	JGE     yrfin
	MOVLQSX (R8)(BX*4), AX
	IMULQ   R9, AX
	VBROADCASTSS (R10)(BX*4), Y6
	VMULPS  (SI)(AX*1), Y6, Y6
	VADDPS  Y6, Y2, Y2

yrfin:
	VADDPS  Y1, Y0, Y0
	VADDPS  Y3, Y2, Y2
	VADDPS  Y2, Y0, Y0
	VCVTPS2PD X0, Y8
	VEXTRACTF128 $1, Y0, X9
	VCVTPS2PD X9, Y9
	VBROADCASTSD (R14), Y10
	VMULPD Y10, Y8, Y8
	VMULPD Y10, Y9, Y9
	VMASKMOVPD (R11), Y13, Y11
	VSUBPD Y8, Y11, Y11
	VMASKMOVPD Y11, Y13, (R12)
	VMASKMOVPD 32(R11), Y14, Y12
	VSUBPD Y9, Y12, Y12
	VMASKMOVPD Y12, Y14, 32(R12)
	LEAQ (R11)(R9*2), R11
	LEAQ (R12)(R9*2), R12
	ADDQ $8, R14
	ADDQ $8, DI
	DECQ R13
	JMP  yrow

yrdone:
	VZEROUPPER
	RET
