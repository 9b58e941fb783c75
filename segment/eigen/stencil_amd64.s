//go:build !purego

#include "textflag.h"

// The stencil product's interior rows with AVX (see stencil_amd64.go).
// For each row i of rows, with the pointers advanced by one row each time:
//
//	acc[c] = Σ_f float64(ws[f]) · t[lm[f] + c]   (f = 0..k-1 in order)
//	y[c]   = x[c] - s · acc[c]
//
// for the W columns c of the group (W = 6, 5, 3 or 2). Every lane does the
// scalar code's operations in its order (one multiply, then one add, per
// f; no fused multiply-add), so the result is the Go loop's bit for bit.
// Rows are taken two at a time, their sums independent chains.

// func stencilRows6(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)
TEXT ·stencilRows6(SB), NOSPLIT, $0-72
	MOVQ t+0(FP), SI
	MOVQ lm+8(FP), DI
	MOVQ k+16(FP), CX
	MOVQ ws+24(FP), R8
	MOVQ s+32(FP), R9
	MOVQ x+40(FP), R10
	MOVQ y+48(FP), R11
	MOVQ stride+56(FP), R12
	SHLQ $3, R12
	MOVQ rows+64(FP), R13
	LEAQ (R8)(CX*4), DX

pair6:
	CMPQ R13, $2
	JLT  single6
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y5, Y5, Y5
	VXORPD Y6, Y6, Y6
	XORQ BX, BX
	TESTQ CX, CX
	JEQ  fin6p

loop6p:
	MOVQ (DI)(BX*8), AX
	LEAQ (SI)(AX*8), AX
	VBROADCASTSS (R8)(BX*4), X2
	VCVTPS2PD X2, Y2
	VBROADCASTSS (DX)(BX*4), X3
	VCVTPS2PD X3, Y3
	VMULPD (AX), Y2, Y4
	VADDPD Y4, Y0, Y0
	VMULPD 32(AX), X2, X7
	VADDPD X7, X1, X1
	VMULPD (AX)(R12*1), Y3, Y8
	VADDPD Y8, Y5, Y5
	VMULPD 32(AX)(R12*1), X3, X9
	VADDPD X9, X6, X6
	INCQ BX
	CMPQ BX, CX
	JLT  loop6p

fin6p:
	VBROADCASTSD (R9), Y10
	VMULPD Y10, Y0, Y0
	VMOVUPD (R10), Y11
	VSUBPD Y0, Y11, Y11
	VMOVUPD Y11, (R11)
	VMULPD X10, X1, X1
	VMOVUPD 32(R10), X12
	VSUBPD X1, X12, X12
	VMOVUPD X12, 32(R11)
	VBROADCASTSD 8(R9), Y10
	VMULPD Y10, Y5, Y5
	VMOVUPD (R10)(R12*1), Y11
	VSUBPD Y5, Y11, Y11
	VMOVUPD Y11, (R11)(R12*1)
	VMULPD X10, X6, X6
	VMOVUPD 32(R10)(R12*1), X12
	VSUBPD X6, X12, X12
	VMOVUPD X12, 32(R11)(R12*1)
	LEAQ (SI)(R12*2), SI
	LEAQ (R10)(R12*2), R10
	LEAQ (R11)(R12*2), R11
	ADDQ $16, R9
	LEAQ (DX)(CX*4), R8
	LEAQ (R8)(CX*4), DX
	SUBQ $2, R13
	JMP  pair6

single6:
	TESTQ R13, R13
	JEQ  done6
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	XORQ BX, BX
	TESTQ CX, CX
	JEQ  fin6s

loop6s:
	MOVQ (DI)(BX*8), AX
	LEAQ (SI)(AX*8), AX
	VBROADCASTSS (R8)(BX*4), X2
	VCVTPS2PD X2, Y2
	VMULPD (AX), Y2, Y4
	VADDPD Y4, Y0, Y0
	VMULPD 32(AX), X2, X7
	VADDPD X7, X1, X1
	INCQ BX
	CMPQ BX, CX
	JLT  loop6s

fin6s:
	VBROADCASTSD (R9), Y10
	VMULPD Y10, Y0, Y0
	VMOVUPD (R10), Y11
	VSUBPD Y0, Y11, Y11
	VMOVUPD Y11, (R11)
	VMULPD X10, X1, X1
	VMOVUPD 32(R10), X12
	VSUBPD X1, X12, X12
	VMOVUPD X12, 32(R11)

done6:
	VZEROUPPER
	RET

// func stencilRows2(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)
TEXT ·stencilRows2(SB), NOSPLIT, $0-72
	MOVQ t+0(FP), SI
	MOVQ lm+8(FP), DI
	MOVQ k+16(FP), CX
	MOVQ ws+24(FP), R8
	MOVQ s+32(FP), R9
	MOVQ x+40(FP), R10
	MOVQ y+48(FP), R11
	MOVQ stride+56(FP), R12
	SHLQ $3, R12
	MOVQ rows+64(FP), R13
	LEAQ (R8)(CX*4), DX

pair2:
	CMPQ R13, $2
	JLT  single2
	VXORPD X0, X0, X0
	VXORPD X5, X5, X5
	XORQ BX, BX
	TESTQ CX, CX
	JEQ  fin2p

loop2p:
	MOVQ (DI)(BX*8), AX
	LEAQ (SI)(AX*8), AX
	VBROADCASTSS (R8)(BX*4), X2
	VCVTPS2PD X2, X2
	VBROADCASTSS (DX)(BX*4), X3
	VCVTPS2PD X3, X3
	VMULPD (AX), X2, X4
	VADDPD X4, X0, X0
	VMULPD (AX)(R12*1), X3, X8
	VADDPD X8, X5, X5
	INCQ BX
	CMPQ BX, CX
	JLT  loop2p

fin2p:
	VMOVDDUP (R9), X10
	VMULPD X10, X0, X0
	VMOVUPD (R10), X11
	VSUBPD X0, X11, X11
	VMOVUPD X11, (R11)
	VMOVDDUP 8(R9), X10
	VMULPD X10, X5, X5
	VMOVUPD (R10)(R12*1), X11
	VSUBPD X5, X11, X11
	VMOVUPD X11, (R11)(R12*1)
	LEAQ (SI)(R12*2), SI
	LEAQ (R10)(R12*2), R10
	LEAQ (R11)(R12*2), R11
	ADDQ $16, R9
	LEAQ (DX)(CX*4), R8
	LEAQ (R8)(CX*4), DX
	SUBQ $2, R13
	JMP  pair2

single2:
	TESTQ R13, R13
	JEQ  done2
	VXORPD X0, X0, X0
	XORQ BX, BX
	TESTQ CX, CX
	JEQ  fin2s

loop2s:
	MOVQ (DI)(BX*8), AX
	LEAQ (SI)(AX*8), AX
	VBROADCASTSS (R8)(BX*4), X2
	VCVTPS2PD X2, X2
	VMULPD (AX), X2, X4
	VADDPD X4, X0, X0
	INCQ BX
	CMPQ BX, CX
	JLT  loop2s

fin2s:
	VMOVDDUP (R9), X10
	VMULPD X10, X0, X0
	VMOVUPD (R10), X11
	VSUBPD X0, X11, X11
	VMOVUPD X11, (R11)

done2:
	VZEROUPPER
	RET

// The compressed-row product of the coarse levels (level.mulRows) in
// AVX: for rows rows from the pointers, one row at a time,
//
//	y[c] = x[c] - s · Σ_p float64(wt[p]) · t[col[p]·stride + c]
//
// over p = rowPtr[i]..rowPtr[i+1]-1 in order, for the W columns c of
// the group (t points at the group's first column), each lane doing the
// Go loop's operations in its order.

// func csrRows6(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int)
TEXT ·csrRows6(SB), NOSPLIT, $0-72
	MOVQ t+0(FP), SI
	MOVQ rowPtr+8(FP), DI
	MOVQ col+16(FP), R8
	MOVQ wt+24(FP), R9
	MOVQ s+32(FP), R10
	MOVQ x+40(FP), R11
	MOVQ y+48(FP), DX
	MOVQ stride+56(FP), R12
	SHLQ $3, R12
	MOVQ rows+64(FP), R13

row6:
	TESTQ R13, R13
	JEQ  done6
	MOVQ (DI), BX
	MOVQ 8(DI), CX
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1

inner6:
	CMPQ BX, CX
	JGE  fin6
	MOVLQSX (R8)(BX*4), AX
	IMULQ R12, AX
	VBROADCASTSS (R9)(BX*4), X2
	VCVTPS2PD X2, Y2
	VMULPD (SI)(AX*1), Y2, Y4
	VADDPD Y4, Y0, Y0
	VMULPD 32(SI)(AX*1), X2, X5
	VADDPD X5, X1, X1
	INCQ BX
	JMP  inner6

fin6:
	VBROADCASTSD (R10), Y6
	VMULPD Y6, Y0, Y0
	VMOVUPD (R11), Y7
	VSUBPD Y0, Y7, Y7
	VMOVUPD Y7, (DX)
	VMULPD X6, X1, X1
	VMOVUPD 32(R11), X8
	VSUBPD X1, X8, X8
	VMOVUPD X8, 32(DX)
	ADDQ $8, DI
	ADDQ $8, R10
	ADDQ R12, R11
	ADDQ R12, DX
	DECQ R13
	JMP  row6

done6:
	VZEROUPPER
	RET

// func csrRows2(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int)
TEXT ·csrRows2(SB), NOSPLIT, $0-72
	MOVQ t+0(FP), SI
	MOVQ rowPtr+8(FP), DI
	MOVQ col+16(FP), R8
	MOVQ wt+24(FP), R9
	MOVQ s+32(FP), R10
	MOVQ x+40(FP), R11
	MOVQ y+48(FP), DX
	MOVQ stride+56(FP), R12
	SHLQ $3, R12
	MOVQ rows+64(FP), R13

row2:
	TESTQ R13, R13
	JEQ  done2
	MOVQ (DI), BX
	MOVQ 8(DI), CX
	VXORPD X0, X0, X0

inner2:
	CMPQ BX, CX
	JGE  fin2
	MOVLQSX (R8)(BX*4), AX
	IMULQ R12, AX
	VBROADCASTSS (R9)(BX*4), X2
	VCVTPS2PD X2, X2
	VMULPD (SI)(AX*1), X2, X4
	VADDPD X4, X0, X0
	INCQ BX
	JMP  inner2

fin2:
	VMOVDDUP (R10), X6
	VMULPD X6, X0, X0
	VMOVUPD (R11), X7
	VSUBPD X0, X7, X7
	VMOVUPD X7, (DX)
	ADDQ $8, DI
	ADDQ $8, R10
	ADDQ R12, R11
	ADDQ R12, DX
	DECQ R13
	JMP  row2

done2:
	VZEROUPPER
	RET

// func stencilRows5(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)
TEXT ·stencilRows5(SB), NOSPLIT, $0-72
	MOVQ t+0(FP), SI
	MOVQ lm+8(FP), DI
	MOVQ k+16(FP), CX
	MOVQ ws+24(FP), R8
	MOVQ s+32(FP), R9
	MOVQ x+40(FP), R10
	MOVQ y+48(FP), R11
	MOVQ stride+56(FP), R12
	SHLQ $3, R12
	MOVQ rows+64(FP), R13
	LEAQ (R8)(CX*4), DX

pair5:
	CMPQ R13, $2
	JLT  single5
	VXORPD Y0, Y0, Y0
	VXORPD X1, X1, X1
	VXORPD Y5, Y5, Y5
	VXORPD X6, X6, X6
	XORQ BX, BX
	TESTQ CX, CX
	JEQ  fin5p

loop5p:
	MOVQ (DI)(BX*8), AX
	LEAQ (SI)(AX*8), AX
	VBROADCASTSS (R8)(BX*4), X2
	VCVTPS2PD X2, Y2
	VBROADCASTSS (DX)(BX*4), X3
	VCVTPS2PD X3, Y3
	VMULPD 0(AX), Y2, Y4
	VADDPD Y4, Y0, Y0
	VMULSD 32(AX), X2, X7
	VADDSD X7, X1, X1
	VMULPD 0(AX)(R12*1), Y3, Y8
	VADDPD Y8, Y5, Y5
	VMULSD 32(AX)(R12*1), X3, X9
	VADDSD X9, X6, X6
	INCQ BX
	CMPQ BX, CX
	JLT  loop5p

fin5p:
	VBROADCASTSD (R9), Y10
	VMULPD Y10, Y0, Y0
	VMOVUPD 0(R10), Y11
	VSUBPD Y0, Y11, Y11
	VMOVUPD Y11, 0(R11)
	VMULSD X10, X1, X1
	VMOVSD 32(R10), X12
	VSUBSD X1, X12, X12
	VMOVSD X12, 32(R11)
	VBROADCASTSD 8(R9), Y10
	VMULPD Y10, Y5, Y5
	VMOVUPD 0(R10)(R12*1), Y11
	VSUBPD Y5, Y11, Y11
	VMOVUPD Y11, 0(R11)(R12*1)
	VMULSD X10, X6, X6
	VMOVSD 32(R10)(R12*1), X12
	VSUBSD X6, X12, X12
	VMOVSD X12, 32(R11)(R12*1)
	LEAQ (SI)(R12*2), SI
	LEAQ (R10)(R12*2), R10
	LEAQ (R11)(R12*2), R11
	ADDQ $16, R9
	LEAQ (DX)(CX*4), R8
	LEAQ (R8)(CX*4), DX
	SUBQ $2, R13
	JMP  pair5

single5:
	TESTQ R13, R13
	JEQ  done5
	VXORPD Y0, Y0, Y0
	VXORPD X1, X1, X1
	XORQ BX, BX
	TESTQ CX, CX
	JEQ  fin5s

loop5s:
	MOVQ (DI)(BX*8), AX
	LEAQ (SI)(AX*8), AX
	VBROADCASTSS (R8)(BX*4), X2
	VCVTPS2PD X2, Y2
	VMULPD 0(AX), Y2, Y4
	VADDPD Y4, Y0, Y0
	VMULSD 32(AX), X2, X7
	VADDSD X7, X1, X1
	INCQ BX
	CMPQ BX, CX
	JLT  loop5s

fin5s:
	VBROADCASTSD (R9), Y10
	VMULPD Y10, Y0, Y0
	VMOVUPD 0(R10), Y11
	VSUBPD Y0, Y11, Y11
	VMOVUPD Y11, 0(R11)
	VMULSD X10, X1, X1
	VMOVSD 32(R10), X12
	VSUBSD X1, X12, X12
	VMOVSD X12, 32(R11)

done5:
	VZEROUPPER
	RET

// func csrRows5(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int)
TEXT ·csrRows5(SB), NOSPLIT, $0-72
	MOVQ t+0(FP), SI
	MOVQ rowPtr+8(FP), DI
	MOVQ col+16(FP), R8
	MOVQ wt+24(FP), R9
	MOVQ s+32(FP), R10
	MOVQ x+40(FP), R11
	MOVQ y+48(FP), DX
	MOVQ stride+56(FP), R12
	SHLQ $3, R12
	MOVQ rows+64(FP), R13

crow5:
	TESTQ R13, R13
	JEQ  cdone5
	MOVQ (DI), BX
	MOVQ 8(DI), CX
	VXORPD Y0, Y0, Y0
	VXORPD X1, X1, X1

cinner5:
	CMPQ BX, CX
	JGE  cfin5
	MOVLQSX (R8)(BX*4), AX
	IMULQ R12, AX
	VBROADCASTSS (R9)(BX*4), X2
	VCVTPS2PD X2, Y2
	VMULPD 0(SI)(AX*1), Y2, Y4
	VADDPD Y4, Y0, Y0
	VMULSD 32(SI)(AX*1), X2, X5
	VADDSD X5, X1, X1
	INCQ BX
	JMP  cinner5

cfin5:
	VBROADCASTSD (R10), Y6
	VMULPD Y6, Y0, Y0
	VMOVUPD 0(R11), Y7
	VSUBPD Y0, Y7, Y7
	VMOVUPD Y7, 0(DX)
	VMULSD X6, X1, X1
	VMOVSD 32(R11), X8
	VSUBSD X1, X8, X8
	VMOVSD X8, 32(DX)
	ADDQ $8, DI
	ADDQ $8, R10
	ADDQ R12, R11
	ADDQ R12, DX
	DECQ R13
	JMP  crow5

cdone5:
	VZEROUPPER
	RET

// func stencilRows3(t *float64, lm *int, k int, ws *float32, s *float64, x *float64, y *float64, stride int, rows int)
TEXT ·stencilRows3(SB), NOSPLIT, $0-72
	MOVQ t+0(FP), SI
	MOVQ lm+8(FP), DI
	MOVQ k+16(FP), CX
	MOVQ ws+24(FP), R8
	MOVQ s+32(FP), R9
	MOVQ x+40(FP), R10
	MOVQ y+48(FP), R11
	MOVQ stride+56(FP), R12
	SHLQ $3, R12
	MOVQ rows+64(FP), R13
	LEAQ (R8)(CX*4), DX

pair3:
	CMPQ R13, $2
	JLT  single3
	VXORPD X0, X0, X0
	VXORPD X1, X1, X1
	VXORPD X5, X5, X5
	VXORPD X6, X6, X6
	XORQ BX, BX
	TESTQ CX, CX
	JEQ  fin3p

loop3p:
	MOVQ (DI)(BX*8), AX
	LEAQ (SI)(AX*8), AX
	VBROADCASTSS (R8)(BX*4), X2
	VCVTPS2PD X2, Y2
	VBROADCASTSS (DX)(BX*4), X3
	VCVTPS2PD X3, Y3
	VMULPD 0(AX), X2, X4
	VADDPD X4, X0, X0
	VMULSD 16(AX), X2, X7
	VADDSD X7, X1, X1
	VMULPD 0(AX)(R12*1), X3, X8
	VADDPD X8, X5, X5
	VMULSD 16(AX)(R12*1), X3, X9
	VADDSD X9, X6, X6
	INCQ BX
	CMPQ BX, CX
	JLT  loop3p

fin3p:
	VBROADCASTSD (R9), Y10
	VMULPD X10, X0, X0
	VMOVUPD 0(R10), X11
	VSUBPD X0, X11, X11
	VMOVUPD X11, 0(R11)
	VMULSD X10, X1, X1
	VMOVSD 16(R10), X12
	VSUBSD X1, X12, X12
	VMOVSD X12, 16(R11)
	VBROADCASTSD 8(R9), Y10
	VMULPD X10, X5, X5
	VMOVUPD 0(R10)(R12*1), X11
	VSUBPD X5, X11, X11
	VMOVUPD X11, 0(R11)(R12*1)
	VMULSD X10, X6, X6
	VMOVSD 16(R10)(R12*1), X12
	VSUBSD X6, X12, X12
	VMOVSD X12, 16(R11)(R12*1)
	LEAQ (SI)(R12*2), SI
	LEAQ (R10)(R12*2), R10
	LEAQ (R11)(R12*2), R11
	ADDQ $16, R9
	LEAQ (DX)(CX*4), R8
	LEAQ (R8)(CX*4), DX
	SUBQ $2, R13
	JMP  pair3

single3:
	TESTQ R13, R13
	JEQ  done3
	VXORPD X0, X0, X0
	VXORPD X1, X1, X1
	XORQ BX, BX
	TESTQ CX, CX
	JEQ  fin3s

loop3s:
	MOVQ (DI)(BX*8), AX
	LEAQ (SI)(AX*8), AX
	VBROADCASTSS (R8)(BX*4), X2
	VCVTPS2PD X2, Y2
	VMULPD 0(AX), X2, X4
	VADDPD X4, X0, X0
	VMULSD 16(AX), X2, X7
	VADDSD X7, X1, X1
	INCQ BX
	CMPQ BX, CX
	JLT  loop3s

fin3s:
	VBROADCASTSD (R9), Y10
	VMULPD X10, X0, X0
	VMOVUPD 0(R10), X11
	VSUBPD X0, X11, X11
	VMOVUPD X11, 0(R11)
	VMULSD X10, X1, X1
	VMOVSD 16(R10), X12
	VSUBSD X1, X12, X12
	VMOVSD X12, 16(R11)

done3:
	VZEROUPPER
	RET

// func csrRows3(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int)
TEXT ·csrRows3(SB), NOSPLIT, $0-72
	MOVQ t+0(FP), SI
	MOVQ rowPtr+8(FP), DI
	MOVQ col+16(FP), R8
	MOVQ wt+24(FP), R9
	MOVQ s+32(FP), R10
	MOVQ x+40(FP), R11
	MOVQ y+48(FP), DX
	MOVQ stride+56(FP), R12
	SHLQ $3, R12
	MOVQ rows+64(FP), R13

crow3:
	TESTQ R13, R13
	JEQ  cdone3
	MOVQ (DI), BX
	MOVQ 8(DI), CX
	VXORPD X0, X0, X0
	VXORPD X1, X1, X1

cinner3:
	CMPQ BX, CX
	JGE  cfin3
	MOVLQSX (R8)(BX*4), AX
	IMULQ R12, AX
	VBROADCASTSS (R9)(BX*4), X2
	VCVTPS2PD X2, Y2
	VMULPD 0(SI)(AX*1), X2, X4
	VADDPD X4, X0, X0
	VMULSD 16(SI)(AX*1), X2, X5
	VADDSD X5, X1, X1
	INCQ BX
	JMP  cinner3

cfin3:
	VBROADCASTSD (R10), Y6
	VMULPD X6, X0, X0
	VMOVUPD 0(R11), X7
	VSUBPD X0, X7, X7
	VMOVUPD X7, 0(DX)
	VMULSD X6, X1, X1
	VMOVSD 16(R11), X8
	VSUBSD X1, X8, X8
	VMOVSD X8, 16(DX)
	ADDQ $8, DI
	ADDQ $8, R10
	ADDQ R12, R11
	ADDQ R12, DX
	DECQ R13
	JMP  crow3

cdone3:
	VZEROUPPER
	RET

// The compressed-row product's single column (see oneColumn): for each
// row, the even and odd entries are summed in the two lanes of X0 (lane
// 0 the sum a0 over entries 0, 2, 4, ..., lane 1 a1 over 1, 3, 5, ...,
// each a multiply then an add per entry, as the Go loop does), an odd
// last entry goes to lane 0, and y = x - s·(a0 + a1).
//
// func csrRows1(t *float64, rowPtr *int, col *int32, wt *float32, s *float64, x *float64, y *float64, stride int, rows int)
TEXT ·csrRows1(SB), NOSPLIT, $0-72
	MOVQ t+0(FP), SI
	MOVQ rowPtr+8(FP), DI
	MOVQ col+16(FP), R8
	MOVQ wt+24(FP), R9
	MOVQ s+32(FP), R10
	MOVQ x+40(FP), R11
	MOVQ y+48(FP), DX
	MOVQ stride+56(FP), R12
	SHLQ $3, R12
	MOVQ rows+64(FP), R13

row1:
	TESTQ R13, R13
	JEQ  done1
	MOVQ (DI), BX
	MOVQ 8(DI), CX
	VXORPD X0, X0, X0
	LEAQ -1(CX), R15 // pairs while BX < CX-1

pairs1:
	CMPQ BX, R15
	JGE  tail1
	MOVLQSX (R8)(BX*4), AX
	IMULQ R12, AX
	MOVLQSX 4(R8)(BX*4), R14
	IMULQ R12, R14
	VMOVSD (SI)(AX*1), X3
	VMOVHPD (SI)(R14*1), X3, X3
	VCVTPS2PD (R9)(BX*4), X2
	VMULPD X3, X2, X4
	VADDPD X4, X0, X0
	ADDQ $2, BX
	JMP  pairs1

tail1:
	CMPQ BX, CX
	JGE  fin1
	MOVLQSX (R8)(BX*4), AX
	IMULQ R12, AX
	VMOVSS (R9)(BX*4), X2
	VCVTSS2SD X2, X2, X2
	VMULSD (SI)(AX*1), X2, X4
	VADDSD X4, X0, X0

fin1:
	VUNPCKHPD X0, X0, X1
	VADDSD X1, X0, X0
	VMULSD (R10), X0, X0
	VMOVSD (R11), X7
	VSUBSD X0, X7, X7
	VMOVSD X7, (DX)
	ADDQ $8, DI
	ADDQ $8, R10
	ADDQ R12, R11
	ADDQ R12, DX
	DECQ R13
	JMP  row1

done1:
	RET
