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
