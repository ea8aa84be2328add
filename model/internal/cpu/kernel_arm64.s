//go:build !purego

#include "textflag.h"
#include "neon_arm64.h"

// The GEMM micro-kernels for arm64 ASIMD (NEON). A register block of
// 8 rows × 12 columns keeps 24 accumulators (V0 … V23, row i in V(3i) …
// V(3i+2)), one k step of the packed A panel in V24, V25 (8 rows) and of
// the B panel in V26 … V28 (12 columns): 29 of the 32 vector registers.
// Each k step loads 80 bytes and issues 24 FMLA by element (96
// multiply-adds). See DEVELOPERS.md for the throughput estimate.

// STEP8x12 multiplies A lanes into the B vectors for the 8 rows.
#define STEP8x12 \
	FMLAE(0, 26, 24, 0) \
	FMLAE(1, 27, 24, 0) \
	FMLAE(2, 28, 24, 0) \
	FMLAE(3, 26, 24, 1) \
	FMLAE(4, 27, 24, 1) \
	FMLAE(5, 28, 24, 1) \
	FMLAE(6, 26, 24, 2) \
	FMLAE(7, 27, 24, 2) \
	FMLAE(8, 28, 24, 2) \
	FMLAE(9, 26, 24, 3) \
	FMLAE(10, 27, 24, 3) \
	FMLAE(11, 28, 24, 3) \
	FMLAE(12, 26, 25, 0) \
	FMLAE(13, 27, 25, 0) \
	FMLAE(14, 28, 25, 0) \
	FMLAE(15, 26, 25, 1) \
	FMLAE(16, 27, 25, 1) \
	FMLAE(17, 28, 25, 1) \
	FMLAE(18, 26, 25, 2) \
	FMLAE(19, 27, 25, 2) \
	FMLAE(20, 28, 25, 2) \
	FMLAE(21, 26, 25, 3) \
	FMLAE(22, 27, 25, 3) \
	FMLAE(23, 28, 25, 3)

#define ZERO24 \
	VEOR V0.B16, V0.B16, V0.B16 \
	VEOR V1.B16, V1.B16, V1.B16 \
	VEOR V2.B16, V2.B16, V2.B16 \
	VEOR V3.B16, V3.B16, V3.B16 \
	VEOR V4.B16, V4.B16, V4.B16 \
	VEOR V5.B16, V5.B16, V5.B16 \
	VEOR V6.B16, V6.B16, V6.B16 \
	VEOR V7.B16, V7.B16, V7.B16 \
	VEOR V8.B16, V8.B16, V8.B16 \
	VEOR V9.B16, V9.B16, V9.B16 \
	VEOR V10.B16, V10.B16, V10.B16 \
	VEOR V11.B16, V11.B16, V11.B16 \
	VEOR V12.B16, V12.B16, V12.B16 \
	VEOR V13.B16, V13.B16, V13.B16 \
	VEOR V14.B16, V14.B16, V14.B16 \
	VEOR V15.B16, V15.B16, V15.B16 \
	VEOR V16.B16, V16.B16, V16.B16 \
	VEOR V17.B16, V17.B16, V17.B16 \
	VEOR V18.B16, V18.B16, V18.B16 \
	VEOR V19.B16, V19.B16, V19.B16 \
	VEOR V20.B16, V20.B16, V20.B16 \
	VEOR V21.B16, V21.B16, V21.B16 \
	VEOR V22.B16, V22.B16, V22.B16 \
	VEOR V23.B16, V23.B16, V23.B16
// The tail of the tile kernels: if the acc flag (R5) is set, the tile at
// R3 (row stride R4 bytes) is added to the accumulators; then they are
// stored there. Uses R6 and V26 … V28.
#define ADDROWS \
	MOVD R3, R6 \
	VLD1 (R6), [V26.S4, V27.S4, V28.S4] \
	FADD4(0, 0, 26) \
	FADD4(1, 1, 27) \
	FADD4(2, 2, 28) \
	ADD R4, R6 \
	VLD1 (R6), [V26.S4, V27.S4, V28.S4] \
	FADD4(3, 3, 26) \
	FADD4(4, 4, 27) \
	FADD4(5, 5, 28) \
	ADD R4, R6 \
	VLD1 (R6), [V26.S4, V27.S4, V28.S4] \
	FADD4(6, 6, 26) \
	FADD4(7, 7, 27) \
	FADD4(8, 8, 28) \
	ADD R4, R6 \
	VLD1 (R6), [V26.S4, V27.S4, V28.S4] \
	FADD4(9, 9, 26) \
	FADD4(10, 10, 27) \
	FADD4(11, 11, 28) \
	ADD R4, R6 \
	VLD1 (R6), [V26.S4, V27.S4, V28.S4] \
	FADD4(12, 12, 26) \
	FADD4(13, 13, 27) \
	FADD4(14, 14, 28) \
	ADD R4, R6 \
	VLD1 (R6), [V26.S4, V27.S4, V28.S4] \
	FADD4(15, 15, 26) \
	FADD4(16, 16, 27) \
	FADD4(17, 17, 28) \
	ADD R4, R6 \
	VLD1 (R6), [V26.S4, V27.S4, V28.S4] \
	FADD4(18, 18, 26) \
	FADD4(19, 19, 27) \
	FADD4(20, 20, 28) \
	ADD R4, R6 \
	VLD1 (R6), [V26.S4, V27.S4, V28.S4] \
	FADD4(21, 21, 26) \
	FADD4(22, 22, 27) \
	FADD4(23, 23, 28)

#define STOREROWS \
	VST1 [V0.S4, V1.S4, V2.S4], (R3) \
	ADD R4, R3 \
	VST1 [V3.S4, V4.S4, V5.S4], (R3) \
	ADD R4, R3 \
	VST1 [V6.S4, V7.S4, V8.S4], (R3) \
	ADD R4, R3 \
	VST1 [V9.S4, V10.S4, V11.S4], (R3) \
	ADD R4, R3 \
	VST1 [V12.S4, V13.S4, V14.S4], (R3) \
	ADD R4, R3 \
	VST1 [V15.S4, V16.S4, V17.S4], (R3) \
	ADD R4, R3 \
	VST1 [V18.S4, V19.S4, V20.S4], (R3) \
	ADD R4, R3 \
	VST1 [V21.S4, V22.S4, V23.S4], (R3)

// func kernelNEON8x12(k int, a, b, c []float32, ldc int, acc bool)
TEXT ·kernelNEON8x12(SB), NOSPLIT, $0-89
	MOVD k+0(FP), R0
	MOVD a_base+8(FP), R1
	MOVD b_base+32(FP), R2
	ZERO24
	CBZ  R0, tail

loop:
	VLD1.P 32(R1), [V24.S4, V25.S4]
	VLD1.P 48(R2), [V26.S4, V27.S4, V28.S4]
	STEP8x12
	SUBS $1, R0
	BNE  loop

tail:
	MOVD  c_base+56(FP), R3
	MOVD  ldc+80(FP), R4
	LSL   $2, R4
	MOVBU acc+88(FP), R5
	CBZ   R5, store
	ADDROWS

store:
	STOREROWS
	RET

// func indirectNEON8x12(k int, a, b []float32, offs []int, c []float32, ldc int, acc bool)
TEXT ·indirectNEON8x12(SB), NOSPLIT, $0-113
	MOVD k+0(FP), R0
	MOVD a_base+8(FP), R1
	MOVD b_base+32(FP), R2
	MOVD offs_base+56(FP), R7
	ZERO24
	CBZ  R0, tail

loop:
	MOVD.P 8(R7), R8
	ADD    R8<<2, R2, R9
	VLD1.P 32(R1), [V24.S4, V25.S4]
	VLD1   (R9), [V26.S4, V27.S4, V28.S4]
	STEP8x12
	SUBS $1, R0
	BNE  loop

tail:
	MOVD  c_base+80(FP), R3
	MOVD  ldc+104(FP), R4
	LSL   $2, R4
	MOVBU acc+112(FP), R5
	CBZ   R5, store
	ADDROWS

store:
	STOREROWS
	RET

// func dotNEON4x6(n int, y []float32, ldy int, x []float32, offs []int, out []float32, ldo int)
//
// 24 accumulators V0 … V23 (row i, column j in V(6i+j)) of 4-lane partial
// sums; the rows of y load into V24 … V27, the columns of x alternate
// between V28 and V29. The reduction adds lanes pairwise (FADDP).
TEXT ·dotNEON4x6(SB), NOSPLIT, $0-120
	MOVD n+0(FP), R0
	LSR  $2, R0
	MOVD y_base+8(FP), R1
	MOVD ldy+32(FP), R2
	LSL  $2, R2
	ADD  R2, R1, R3
	ADD  R2, R3, R4
	ADD  R2, R4, R5
	MOVD x_base+40(FP), R6
	MOVD offs_base+64(FP), R7
	MOVD 0(R7), R8
	ADD  R8<<2, R6, R8
	MOVD 8(R7), R9
	ADD  R9<<2, R6, R9
	MOVD 16(R7), R10
	ADD  R10<<2, R6, R10
	MOVD 24(R7), R11
	ADD  R11<<2, R6, R11
	MOVD 32(R7), R12
	ADD  R12<<2, R6, R12
	MOVD 40(R7), R13
	ADD  R13<<2, R6, R13
	ZERO24
	CBZ  R0, reduce

loop:
	VLD1.P 16(R1), [V24.S4]
	VLD1.P 16(R3), [V25.S4]
	VLD1.P 16(R4), [V26.S4]
	VLD1.P 16(R5), [V27.S4]
	VLD1.P 16(R8), [V28.S4]
	FMLA4(0, 24, 28)
	FMLA4(6, 25, 28)
	FMLA4(12, 26, 28)
	FMLA4(18, 27, 28)
	VLD1.P 16(R9), [V29.S4]
	FMLA4(1, 24, 29)
	FMLA4(7, 25, 29)
	FMLA4(13, 26, 29)
	FMLA4(19, 27, 29)
	VLD1.P 16(R10), [V28.S4]
	FMLA4(2, 24, 28)
	FMLA4(8, 25, 28)
	FMLA4(14, 26, 28)
	FMLA4(20, 27, 28)
	VLD1.P 16(R11), [V29.S4]
	FMLA4(3, 24, 29)
	FMLA4(9, 25, 29)
	FMLA4(15, 26, 29)
	FMLA4(21, 27, 29)
	VLD1.P 16(R12), [V28.S4]
	FMLA4(4, 24, 28)
	FMLA4(10, 25, 28)
	FMLA4(16, 26, 28)
	FMLA4(22, 27, 28)
	VLD1.P 16(R13), [V29.S4]
	FMLA4(5, 24, 29)
	FMLA4(11, 25, 29)
	FMLA4(17, 26, 29)
	FMLA4(23, 27, 29)
	SUBS $1, R0
	BNE  loop

reduce:
	MOVD out_base+88(FP), R14
	MOVD ldo+112(FP), R15
	LSL  $2, R15
	FADDP4(29, 0, 1)
	FADDP4(30, 2, 3)
	FADDP4(29, 29, 30)
	VLD1 (R14), [V30.S4]
	FADD4(30, 30, 29)
	VST1 [V30.S4], (R14)
	FADDP4(29, 4, 5)
	FADDP4(29, 29, 29)
	ADD  $16, R14, R16
	FMOVD (R16), F30
	FADD2(30, 30, 29)
	FMOVD F30, (R16)
	ADD  R15, R14
	FADDP4(29, 6, 7)
	FADDP4(30, 8, 9)
	FADDP4(29, 29, 30)
	VLD1 (R14), [V30.S4]
	FADD4(30, 30, 29)
	VST1 [V30.S4], (R14)
	FADDP4(29, 10, 11)
	FADDP4(29, 29, 29)
	ADD  $16, R14, R16
	FMOVD (R16), F30
	FADD2(30, 30, 29)
	FMOVD F30, (R16)
	ADD  R15, R14
	FADDP4(29, 12, 13)
	FADDP4(30, 14, 15)
	FADDP4(29, 29, 30)
	VLD1 (R14), [V30.S4]
	FADD4(30, 30, 29)
	VST1 [V30.S4], (R14)
	FADDP4(29, 16, 17)
	FADDP4(29, 29, 29)
	ADD  $16, R14, R16
	FMOVD (R16), F30
	FADD2(30, 30, 29)
	FMOVD F30, (R16)
	ADD  R15, R14
	FADDP4(29, 18, 19)
	FADDP4(30, 20, 21)
	FADDP4(29, 29, 30)
	VLD1 (R14), [V30.S4]
	FADD4(30, 30, 29)
	VST1 [V30.S4], (R14)
	FADDP4(29, 22, 23)
	FADDP4(29, 29, 29)
	ADD  $16, R14, R16
	FMOVD (R16), F30
	FADD2(30, 30, 29)
	FMOVD F30, (R16)
	RET
