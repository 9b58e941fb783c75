//go:build !purego

#include "textflag.h"

// gramRows4 adds to the na x nb matrix g (row stride gs) the products of
// groups of four consecutive rows of a (width ma, used as na = ma rows of
// g) and b (width mb):
//
//	g[p][q] += a0[p]·b0[q] + a1[p]·b1[q] + a2[p]·b2[q] + a3[p]·b3[q]
//
// evaluated left to right as the Go loop of gramMulti does, for groups
// groups, a and b advancing four rows each time. Lanes run over q; each
// does the scalar code's roundings (no fused multiply-add).
//
// func gramRows4(dst *float64, gs int, a *float64, ma int, b *float64, mb int, groups int)
TEXT ·gramRows4(SB), NOSPLIT, $16-56
	MOVQ dst+0(FP), DX
	MOVQ gs+8(FP), R10
	SHLQ $3, R10
	MOVQ a+16(FP), SI
	MOVQ ma+24(FP), R8
	MOVQ b+32(FP), DI
	MOVQ mb+40(FP), R9
	MOVQ groups+48(FP), R13
	MOVQ R8, R11
	SHLQ $3, R11
	MOVQ R9, R12
	SHLQ $3, R12

group:
	TESTQ R13, R13
	JEQ  done
	// The group's start of g and a, kept in the frame.
	XORQ BX, BX
	MOVQ DX, 0(SP)
	MOVQ SI, 8(SP)

prow:
	CMPQ BX, R8
	JGE  pdone
	VBROADCASTSD (SI), Y0
	VBROADCASTSD (SI)(R11*1), Y1
	LEAQ (SI)(R11*2), AX
	VBROADCASTSD (AX), Y2
	VBROADCASTSD (AX)(R11*1), Y3
	XORQ CX, CX

q4:
	LEAQ 4(CX), AX
	CMPQ AX, R9
	JGT  q2
	LEAQ (DI)(CX*8), AX
	VMULPD (AX), Y0, Y4
	VMULPD (AX)(R12*1), Y1, Y5
	VADDPD Y5, Y4, Y4
	LEAQ (AX)(R12*2), AX
	VMULPD (AX), Y2, Y5
	VADDPD Y5, Y4, Y4
	VMULPD (AX)(R12*1), Y3, Y5
	VADDPD Y5, Y4, Y4
	VMOVUPD (DX)(CX*8), Y6
	VADDPD Y4, Y6, Y6
	VMOVUPD Y6, (DX)(CX*8)
	ADDQ $4, CX
	JMP  q4

q2:
	LEAQ 2(CX), AX
	CMPQ AX, R9
	JGT  q1
	LEAQ (DI)(CX*8), AX
	VMULPD (AX), X0, X4
	VMULPD (AX)(R12*1), X1, X5
	VADDPD X5, X4, X4
	LEAQ (AX)(R12*2), AX
	VMULPD (AX), X2, X5
	VADDPD X5, X4, X4
	VMULPD (AX)(R12*1), X3, X5
	VADDPD X5, X4, X4
	VMOVUPD (DX)(CX*8), X6
	VADDPD X4, X6, X6
	VMOVUPD X6, (DX)(CX*8)
	ADDQ $2, CX

q1:
	CMPQ CX, R9
	JGE  qdone
	LEAQ (DI)(CX*8), AX
	VMULSD (AX), X0, X4
	VMULSD (AX)(R12*1), X1, X5
	VADDSD X5, X4, X4
	LEAQ (AX)(R12*2), AX
	VMULSD (AX), X2, X5
	VADDSD X5, X4, X4
	VMULSD (AX)(R12*1), X3, X5
	VADDSD X5, X4, X4
	VMOVSD (DX)(CX*8), X6
	VADDSD X4, X6, X6
	VMOVSD X6, (DX)(CX*8)

qdone:
	ADDQ $8, SI
	ADDQ R10, DX
	INCQ BX
	JMP  prow

pdone:
	MOVQ 8(SP), SI
	MOVQ 0(SP), DX
	LEAQ (SI)(R11*4), SI
	LEAQ (DI)(R12*4), DI
	DECQ R13
	JMP  group

done:
	VZEROUPPER
	RET

// combineRows sets, for each of rows consecutive rows r (dst and ini
// advanced by r·mc values, s by r·sstride),
// dst[q] = a_q + Σ_p s[p]·c[p·mc + q] for q = 0..mc-1, or subtracts that
// from dst[q] when sub is not 0: the Go loop of dotRows (one running sum
// a column, over p in order), with lanes over q in groups of 12, 8, 6, 4,
// 2 and 1 columns. The sums start from a_q = ini[q] when ini is not nil,
// else from +0: a sum over several inputs is made by calls that each
// continue the previous one's stored sums, exactly as one pass over the
// inputs side by side.
//
// Rows are taken two at a time while two are left (pairr), each lane
// group then carrying the sums of both rows: the coefficients are loaded
// once for the two, and the two rows' additions, which do not depend on
// each other, fill the adder's latency that one row's chain of additions
// over p leaves idle (a row of width 6 took about as long as one of
// width 12). Every sum is the same chain of operations as for one row.
// The second row's s is in R10, so sub is read from the frame there.
//
// func combineRows(dst *float64, mc int, s *float64, ns int, sstride int, c *float64, sub int, ini *float64, rows int)
TEXT ·combineRows(SB), NOSPLIT, $0-72
	MOVQ dst+0(FP), DI
	MOVQ mc+8(FP), R8
	MOVQ s+16(FP), SI
	MOVQ ns+24(FP), R9
	MOVQ sstride+32(FP), R14
	SHLQ $3, R14
	MOVQ c+40(FP), DX
	MOVQ sub+48(FP), R10
	MOVQ ini+56(FP), R12
	MOVQ rows+64(FP), R13
	MOVQ R8, R11
	SHLQ $3, R11

rowr:
	TESTQ R13, R13
	JEQ  finr
	CMPQ R13, $2
	JGE  pairr
	XORQ CX, CX
w12r:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $12
	JLT  w8r
	TESTQ R12, R12
	JNE  w12ir
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y2, Y2, Y2
	JMP  w12zr
w12ir:
	VMOVUPD 0(R12)(CX*8), Y0
	VMOVUPD 32(R12)(CX*8), Y1
	VMOVUPD 64(R12)(CX*8), Y2
w12zr:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
w12lr:
	CMPQ BX, R9
	JGE  w12fr
	VBROADCASTSD (SI)(BX*8), Y8
	VMULPD 0(AX), Y8, Y10
	VADDPD Y10, Y0, Y0
	VMULPD 32(AX), Y8, Y11
	VADDPD Y11, Y1, Y1
	VMULPD 64(AX), Y8, Y12
	VADDPD Y12, Y2, Y2
	ADDQ R11, AX
	INCQ BX
	JMP  w12lr
w12fr:
	TESTQ R10, R10
	JNE  w12sr
	VMOVUPD Y0, 0(DI)(CX*8)
	VMOVUPD Y1, 32(DI)(CX*8)
	VMOVUPD Y2, 64(DI)(CX*8)
	JMP  w12nr
w12sr:
	VMOVUPD 0(DI)(CX*8), Y4
	VSUBPD Y0, Y4, Y4
	VMOVUPD Y4, 0(DI)(CX*8)
	VMOVUPD 32(DI)(CX*8), Y5
	VSUBPD Y1, Y5, Y5
	VMOVUPD Y5, 32(DI)(CX*8)
	VMOVUPD 64(DI)(CX*8), Y6
	VSUBPD Y2, Y6, Y6
	VMOVUPD Y6, 64(DI)(CX*8)
w12nr:
	ADDQ $12, CX
	JMP  w12r
w8r:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $8
	JLT  w6r
	TESTQ R12, R12
	JNE  w8ir
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	JMP  w8zr
w8ir:
	VMOVUPD 0(R12)(CX*8), Y0
	VMOVUPD 32(R12)(CX*8), Y1
w8zr:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
w8lr:
	CMPQ BX, R9
	JGE  w8fr
	VBROADCASTSD (SI)(BX*8), Y8
	VMULPD 0(AX), Y8, Y10
	VADDPD Y10, Y0, Y0
	VMULPD 32(AX), Y8, Y11
	VADDPD Y11, Y1, Y1
	ADDQ R11, AX
	INCQ BX
	JMP  w8lr
w8fr:
	TESTQ R10, R10
	JNE  w8sr
	VMOVUPD Y0, 0(DI)(CX*8)
	VMOVUPD Y1, 32(DI)(CX*8)
	JMP  w8nr
w8sr:
	VMOVUPD 0(DI)(CX*8), Y4
	VSUBPD Y0, Y4, Y4
	VMOVUPD Y4, 0(DI)(CX*8)
	VMOVUPD 32(DI)(CX*8), Y5
	VSUBPD Y1, Y5, Y5
	VMOVUPD Y5, 32(DI)(CX*8)
w8nr:
	ADDQ $8, CX
	JMP  w8r
w6r:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $6
	JLT  w4r
	TESTQ R12, R12
	JNE  w6ir
	VXORPD Y0, Y0, Y0
	VXORPD X1, X1, X1
	JMP  w6zr
w6ir:
	VMOVUPD 0(R12)(CX*8), Y0
	VMOVUPD 32(R12)(CX*8), X1
w6zr:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
w6lr:
	CMPQ BX, R9
	JGE  w6fr
	VBROADCASTSD (SI)(BX*8), Y8
	VMULPD 0(AX), Y8, Y10
	VADDPD Y10, Y0, Y0
	VMULPD 32(AX), X8, X11
	VADDPD X11, X1, X1
	ADDQ R11, AX
	INCQ BX
	JMP  w6lr
w6fr:
	TESTQ R10, R10
	JNE  w6sr
	VMOVUPD Y0, 0(DI)(CX*8)
	VMOVUPD X1, 32(DI)(CX*8)
	JMP  w6nr
w6sr:
	VMOVUPD 0(DI)(CX*8), Y4
	VSUBPD Y0, Y4, Y4
	VMOVUPD Y4, 0(DI)(CX*8)
	VMOVUPD 32(DI)(CX*8), X5
	VSUBPD X1, X5, X5
	VMOVUPD X5, 32(DI)(CX*8)
w6nr:
	ADDQ $6, CX
	JMP  w6r
w4r:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $4
	JLT  w2r
	TESTQ R12, R12
	JNE  w4ir
	VXORPD Y0, Y0, Y0
	JMP  w4zr
w4ir:
	VMOVUPD 0(R12)(CX*8), Y0
w4zr:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
w4lr:
	CMPQ BX, R9
	JGE  w4fr
	VBROADCASTSD (SI)(BX*8), Y8
	VMULPD 0(AX), Y8, Y10
	VADDPD Y10, Y0, Y0
	ADDQ R11, AX
	INCQ BX
	JMP  w4lr
w4fr:
	TESTQ R10, R10
	JNE  w4sr
	VMOVUPD Y0, 0(DI)(CX*8)
	JMP  w4nr
w4sr:
	VMOVUPD 0(DI)(CX*8), Y4
	VSUBPD Y0, Y4, Y4
	VMOVUPD Y4, 0(DI)(CX*8)
w4nr:
	ADDQ $4, CX
	JMP  w4r
w2r:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $2
	JLT  w1r
	TESTQ R12, R12
	JNE  w2ir
	VXORPD X0, X0, X0
	JMP  w2zr
w2ir:
	VMOVUPD 0(R12)(CX*8), X0
w2zr:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
w2lr:
	CMPQ BX, R9
	JGE  w2fr
	VBROADCASTSD (SI)(BX*8), Y8
	VMULPD 0(AX), X8, X10
	VADDPD X10, X0, X0
	ADDQ R11, AX
	INCQ BX
	JMP  w2lr
w2fr:
	TESTQ R10, R10
	JNE  w2sr
	VMOVUPD X0, 0(DI)(CX*8)
	JMP  w2nr
w2sr:
	VMOVUPD 0(DI)(CX*8), X4
	VSUBPD X0, X4, X4
	VMOVUPD X4, 0(DI)(CX*8)
w2nr:
	ADDQ $2, CX
	JMP  w2r
w1r:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $1
	JLT  doner
	TESTQ R12, R12
	JNE  w1ir
	VXORPD X0, X0, X0
	JMP  w1zr
w1ir:
	VMOVSD 0(R12)(CX*8), X0
w1zr:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
w1lr:
	CMPQ BX, R9
	JGE  w1fr
	VBROADCASTSD (SI)(BX*8), Y8
	VMULSD 0(AX), X8, X10
	VADDSD X10, X0, X0
	ADDQ R11, AX
	INCQ BX
	JMP  w1lr
w1fr:
	TESTQ R10, R10
	JNE  w1sr
	VMOVSD X0, 0(DI)(CX*8)
	JMP  w1nr
w1sr:
	VMOVSD 0(DI)(CX*8), X4
	VSUBSD X0, X4, X4
	VMOVSD X4, 0(DI)(CX*8)
w1nr:
	ADDQ $1, CX
	JMP  w1r
doner:
	ADDQ R11, DI
	ADDQ R14, SI
	TESTQ R12, R12
	JEQ  nextr
	ADDQ R11, R12
nextr:
	DECQ R13
	JMP  rowr
pairr:
	LEAQ (SI)(R14*1), R10 // s of the second row (sub is read from the frame)
	XORQ CX, CX
p12:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $12
	JLT  p8
	TESTQ R12, R12
	JNE  p12i
	VXORPD Y0, Y0, Y0
	VXORPD Y3, Y3, Y3
	VXORPD Y1, Y1, Y1
	VXORPD Y4, Y4, Y4
	VXORPD Y2, Y2, Y2
	VXORPD Y5, Y5, Y5
	JMP  p12z
p12i:
	LEAQ (R12)(R11*1), AX
	VMOVUPD 0(R12)(CX*8), Y0
	VMOVUPD 0(AX)(CX*8), Y3
	VMOVUPD 32(R12)(CX*8), Y1
	VMOVUPD 32(AX)(CX*8), Y4
	VMOVUPD 64(R12)(CX*8), Y2
	VMOVUPD 64(AX)(CX*8), Y5
p12z:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
p12l:
	CMPQ BX, R9
	JGE  p12f
	VBROADCASTSD (SI)(BX*8), Y8
	VBROADCASTSD (R10)(BX*8), Y9
	VMOVUPD 0(AX), Y12
	VMOVUPD 32(AX), Y13
	VMOVUPD 64(AX), Y14
	VMULPD Y12, Y8, Y10
	VADDPD Y10, Y0, Y0
	VMULPD Y13, Y8, Y11
	VADDPD Y11, Y1, Y1
	VMULPD Y14, Y8, Y15
	VADDPD Y15, Y2, Y2
	VMULPD Y12, Y9, Y10
	VADDPD Y10, Y3, Y3
	VMULPD Y13, Y9, Y11
	VADDPD Y11, Y4, Y4
	VMULPD Y14, Y9, Y15
	VADDPD Y15, Y5, Y5
	ADDQ R11, AX
	INCQ BX
	JMP  p12l
p12f:
	LEAQ (DI)(R11*1), AX
	CMPQ sub+48(FP), $0
	JNE  p12s
	VMOVUPD Y0, 0(DI)(CX*8)
	VMOVUPD Y3, 0(AX)(CX*8)
	VMOVUPD Y1, 32(DI)(CX*8)
	VMOVUPD Y4, 32(AX)(CX*8)
	VMOVUPD Y2, 64(DI)(CX*8)
	VMOVUPD Y5, 64(AX)(CX*8)
	JMP  p12n
p12s:
	VMOVUPD 0(DI)(CX*8), Y6
	VSUBPD Y0, Y6, Y6
	VMOVUPD Y6, 0(DI)(CX*8)
	VMOVUPD 0(AX)(CX*8), Y6
	VSUBPD Y3, Y6, Y6
	VMOVUPD Y6, 0(AX)(CX*8)
	VMOVUPD 32(DI)(CX*8), Y6
	VSUBPD Y1, Y6, Y6
	VMOVUPD Y6, 32(DI)(CX*8)
	VMOVUPD 32(AX)(CX*8), Y6
	VSUBPD Y4, Y6, Y6
	VMOVUPD Y6, 32(AX)(CX*8)
	VMOVUPD 64(DI)(CX*8), Y6
	VSUBPD Y2, Y6, Y6
	VMOVUPD Y6, 64(DI)(CX*8)
	VMOVUPD 64(AX)(CX*8), Y6
	VSUBPD Y5, Y6, Y6
	VMOVUPD Y6, 64(AX)(CX*8)
p12n:
	ADDQ $12, CX
	JMP  p12
p8:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $8
	JLT  p6
	TESTQ R12, R12
	JNE  p8i
	VXORPD Y0, Y0, Y0
	VXORPD Y3, Y3, Y3
	VXORPD Y1, Y1, Y1
	VXORPD Y4, Y4, Y4
	JMP  p8z
p8i:
	LEAQ (R12)(R11*1), AX
	VMOVUPD 0(R12)(CX*8), Y0
	VMOVUPD 0(AX)(CX*8), Y3
	VMOVUPD 32(R12)(CX*8), Y1
	VMOVUPD 32(AX)(CX*8), Y4
p8z:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
p8l:
	CMPQ BX, R9
	JGE  p8f
	VBROADCASTSD (SI)(BX*8), Y8
	VBROADCASTSD (R10)(BX*8), Y9
	VMOVUPD 0(AX), Y12
	VMOVUPD 32(AX), Y13
	VMULPD Y12, Y8, Y10
	VADDPD Y10, Y0, Y0
	VMULPD Y13, Y8, Y11
	VADDPD Y11, Y1, Y1
	VMULPD Y12, Y9, Y10
	VADDPD Y10, Y3, Y3
	VMULPD Y13, Y9, Y11
	VADDPD Y11, Y4, Y4
	ADDQ R11, AX
	INCQ BX
	JMP  p8l
p8f:
	LEAQ (DI)(R11*1), AX
	CMPQ sub+48(FP), $0
	JNE  p8s
	VMOVUPD Y0, 0(DI)(CX*8)
	VMOVUPD Y3, 0(AX)(CX*8)
	VMOVUPD Y1, 32(DI)(CX*8)
	VMOVUPD Y4, 32(AX)(CX*8)
	JMP  p8n
p8s:
	VMOVUPD 0(DI)(CX*8), Y6
	VSUBPD Y0, Y6, Y6
	VMOVUPD Y6, 0(DI)(CX*8)
	VMOVUPD 0(AX)(CX*8), Y6
	VSUBPD Y3, Y6, Y6
	VMOVUPD Y6, 0(AX)(CX*8)
	VMOVUPD 32(DI)(CX*8), Y6
	VSUBPD Y1, Y6, Y6
	VMOVUPD Y6, 32(DI)(CX*8)
	VMOVUPD 32(AX)(CX*8), Y6
	VSUBPD Y4, Y6, Y6
	VMOVUPD Y6, 32(AX)(CX*8)
p8n:
	ADDQ $8, CX
	JMP  p8
p6:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $6
	JLT  p4
	TESTQ R12, R12
	JNE  p6i
	VXORPD Y0, Y0, Y0
	VXORPD Y3, Y3, Y3
	VXORPD X1, X1, X1
	VXORPD X4, X4, X4
	JMP  p6z
p6i:
	LEAQ (R12)(R11*1), AX
	VMOVUPD 0(R12)(CX*8), Y0
	VMOVUPD 0(AX)(CX*8), Y3
	VMOVUPD 32(R12)(CX*8), X1
	VMOVUPD 32(AX)(CX*8), X4
p6z:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
p6l:
	CMPQ BX, R9
	JGE  p6f
	VBROADCASTSD (SI)(BX*8), Y8
	VBROADCASTSD (R10)(BX*8), Y9
	VMOVUPD 0(AX), Y12
	VMOVUPD 32(AX), X13
	VMULPD Y12, Y8, Y10
	VADDPD Y10, Y0, Y0
	VMULPD X13, X8, X11
	VADDPD X11, X1, X1
	VMULPD Y12, Y9, Y10
	VADDPD Y10, Y3, Y3
	VMULPD X13, X9, X11
	VADDPD X11, X4, X4
	ADDQ R11, AX
	INCQ BX
	JMP  p6l
p6f:
	LEAQ (DI)(R11*1), AX
	CMPQ sub+48(FP), $0
	JNE  p6s
	VMOVUPD Y0, 0(DI)(CX*8)
	VMOVUPD Y3, 0(AX)(CX*8)
	VMOVUPD X1, 32(DI)(CX*8)
	VMOVUPD X4, 32(AX)(CX*8)
	JMP  p6n
p6s:
	VMOVUPD 0(DI)(CX*8), Y6
	VSUBPD Y0, Y6, Y6
	VMOVUPD Y6, 0(DI)(CX*8)
	VMOVUPD 0(AX)(CX*8), Y6
	VSUBPD Y3, Y6, Y6
	VMOVUPD Y6, 0(AX)(CX*8)
	VMOVUPD 32(DI)(CX*8), X6
	VSUBPD X1, X6, X6
	VMOVUPD X6, 32(DI)(CX*8)
	VMOVUPD 32(AX)(CX*8), X6
	VSUBPD X4, X6, X6
	VMOVUPD X6, 32(AX)(CX*8)
p6n:
	ADDQ $6, CX
	JMP  p6
p4:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $4
	JLT  p2
	TESTQ R12, R12
	JNE  p4i
	VXORPD Y0, Y0, Y0
	VXORPD Y3, Y3, Y3
	JMP  p4z
p4i:
	LEAQ (R12)(R11*1), AX
	VMOVUPD 0(R12)(CX*8), Y0
	VMOVUPD 0(AX)(CX*8), Y3
p4z:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
p4l:
	CMPQ BX, R9
	JGE  p4f
	VBROADCASTSD (SI)(BX*8), Y8
	VBROADCASTSD (R10)(BX*8), Y9
	VMOVUPD 0(AX), Y12
	VMULPD Y12, Y8, Y10
	VADDPD Y10, Y0, Y0
	VMULPD Y12, Y9, Y10
	VADDPD Y10, Y3, Y3
	ADDQ R11, AX
	INCQ BX
	JMP  p4l
p4f:
	LEAQ (DI)(R11*1), AX
	CMPQ sub+48(FP), $0
	JNE  p4s
	VMOVUPD Y0, 0(DI)(CX*8)
	VMOVUPD Y3, 0(AX)(CX*8)
	JMP  p4n
p4s:
	VMOVUPD 0(DI)(CX*8), Y6
	VSUBPD Y0, Y6, Y6
	VMOVUPD Y6, 0(DI)(CX*8)
	VMOVUPD 0(AX)(CX*8), Y6
	VSUBPD Y3, Y6, Y6
	VMOVUPD Y6, 0(AX)(CX*8)
p4n:
	ADDQ $4, CX
	JMP  p4
p2:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $2
	JLT  p1
	TESTQ R12, R12
	JNE  p2i
	VXORPD X0, X0, X0
	VXORPD X3, X3, X3
	JMP  p2z
p2i:
	LEAQ (R12)(R11*1), AX
	VMOVUPD 0(R12)(CX*8), X0
	VMOVUPD 0(AX)(CX*8), X3
p2z:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
p2l:
	CMPQ BX, R9
	JGE  p2f
	VBROADCASTSD (SI)(BX*8), Y8
	VBROADCASTSD (R10)(BX*8), Y9
	VMOVUPD 0(AX), X12
	VMULPD X12, X8, X10
	VADDPD X10, X0, X0
	VMULPD X12, X9, X10
	VADDPD X10, X3, X3
	ADDQ R11, AX
	INCQ BX
	JMP  p2l
p2f:
	LEAQ (DI)(R11*1), AX
	CMPQ sub+48(FP), $0
	JNE  p2s
	VMOVUPD X0, 0(DI)(CX*8)
	VMOVUPD X3, 0(AX)(CX*8)
	JMP  p2n
p2s:
	VMOVUPD 0(DI)(CX*8), X6
	VSUBPD X0, X6, X6
	VMOVUPD X6, 0(DI)(CX*8)
	VMOVUPD 0(AX)(CX*8), X6
	VSUBPD X3, X6, X6
	VMOVUPD X6, 0(AX)(CX*8)
p2n:
	ADDQ $2, CX
	JMP  p2
p1:
	MOVQ R8, AX
	SUBQ CX, AX
	CMPQ AX, $1
	JLT  pdoner
	TESTQ R12, R12
	JNE  p1i
	VXORPD X0, X0, X0
	VXORPD X3, X3, X3
	JMP  p1z
p1i:
	LEAQ (R12)(R11*1), AX
	VMOVSD 0(R12)(CX*8), X0
	VMOVSD 0(AX)(CX*8), X3
p1z:
	LEAQ (DX)(CX*8), AX
	XORQ BX, BX
p1l:
	CMPQ BX, R9
	JGE  p1f
	VBROADCASTSD (SI)(BX*8), Y8
	VBROADCASTSD (R10)(BX*8), Y9
	VMOVSD 0(AX), X12
	VMULSD X12, X8, X10
	VADDSD X10, X0, X0
	VMULSD X12, X9, X10
	VADDSD X10, X3, X3
	ADDQ R11, AX
	INCQ BX
	JMP  p1l
p1f:
	LEAQ (DI)(R11*1), AX
	CMPQ sub+48(FP), $0
	JNE  p1s
	VMOVSD X0, 0(DI)(CX*8)
	VMOVSD X3, 0(AX)(CX*8)
	JMP  p1n
p1s:
	VMOVSD 0(DI)(CX*8), X6
	VSUBSD X0, X6, X6
	VMOVSD X6, 0(DI)(CX*8)
	VMOVSD 0(AX)(CX*8), X6
	VSUBSD X3, X6, X6
	VMOVSD X6, 0(AX)(CX*8)
p1n:
	ADDQ $1, CX
	JMP  p1
pdoner:
	LEAQ (DI)(R11*2), DI
	LEAQ (SI)(R14*2), SI
	TESTQ R12, R12
	JEQ  pnextr
	LEAQ (R12)(R11*2), R12
pnextr:
	MOVQ sub+48(FP), R10
	SUBQ $2, R13
	JMP  rowr
finr:
	VZEROUPPER
	RET
