//go:build !purego

#include "textflag.h"
#include "neon_arm64.h"

// V30 holds ¾ and V31 ¼ in every lane. FP macros take Arm operand order
// (destination first); VLD2/VST2 split and interleave even and odd
// elements.

// MIX computes ¾·a + ¼·b of the 4 columns that pa (a) and pb (b) point at
// into register number v, advancing both by 16 bytes. Uses V0, V1.
#define MIX(pa, pb, v) \
	VLD1.P 16(pa), [V0.S4] \
	VLD1.P 16(pb), [V1.S4] \
	FMUL4(v, 1, 31) \
	FMLA4(v, 0, 30)

// func upBilinearRowSIMD(out, a, b []float32)
TEXT ·upBilinearRowSIMD(SB), NOSPLIT, $0-72
	MOVD out_base+0(FP), R0
	MOVD out_len+8(FP), R1
	MOVD a_base+24(FP), R2
	MOVD b_base+48(FP), R5
	LSR  $3, R1                 // 4-column steps: len(out)/2/4
	CBZ  R1, done
	ADD  $4, R2, R3             // a from column j, j+1
	ADD  $8, R2, R4
	ADD  $4, R5, R6             // b likewise
	ADD  $8, R5, R7
	MOVW $0x3f400000, R9
	VDUP R9, V30.S4
	MOVW $0x3e800000, R9
	VDUP R9, V31.S4

loop:
	MIX(R2, R5, 10)             // m[j−1 …]
	MIX(R3, R6, 11)             // m[j …]
	MIX(R4, R7, 12)             // m[j+1 …]
	FMUL4(13, 11, 30)           // ¾·m[j]
	VORR V13.B16, V13.B16, V8.B16
	FMLA4(8, 10, 31)            // even = ¾·m[j] + ¼·m[j−1]
	VORR V13.B16, V13.B16, V9.B16
	FMLA4(9, 12, 31)            // odd  = ¾·m[j] + ¼·m[j+1]
	VST2.P [V8.S4, V9.S4], 32(R0)
	SUBS $1, R1
	BNE  loop

done:
	RET

// COLS loads, from row pointers p1 (column 2j−1) and p3 (column 2j+1),
// the columns 2j−1, 2j, 2j+1, 2j+2 of 4 outputs into registers v, v+1,
// v+2, v+3, advancing both by 32 bytes.
#define COLS(p1, p3, v0, v1, v2, v3) \
	VLD2.P 32(p1), [v0.S4, v1.S4] \
	VLD2.P 32(p3), [v2.S4, v3.S4]

// func upBilinearBackRowSIMD(g, r0, r1, ru, rd []float32)
TEXT ·upBilinearBackRowSIMD(SB), NOSPLIT, $0-120
	MOVD g_base+0(FP), R0
	MOVD g_len+8(FP), R1
	LSR  $2, R1
	CBZ  R1, done
	MOVD r0_base+24(FP), R4
	MOVD r1_base+48(FP), R6
	MOVD ru_base+72(FP), R8
	MOVD rd_base+96(FP), R10
	ADD  $12, R4, R5            // column 3 = 2j+1 for j = 1
	ADD  $4, R4                 // column 1 = 2j−1
	ADD  $12, R6, R7
	ADD  $4, R6
	ADD  $12, R8, R9
	ADD  $4, R8
	ADD  $12, R10, R11
	ADD  $4, R10
	MOVW $0x3f400000, R12
	VDUP R12, V30.S4
	MOVW $0x3e800000, R12
	VDUP R12, V31.S4

loop:
	COLS(R4, R5, V0, V1, V2, V3)      // r0
	COLS(R6, R7, V4, V5, V6, V7)      // r1
	COLS(R8, R9, V8, V9, V10, V11)    // ru
	COLS(R10, R11, V12, V13, V14, V15) // rd
	FADD4(0, 0, 4)                    // r0 + r1
	FADD4(1, 1, 5)
	FADD4(2, 2, 6)
	FADD4(3, 3, 7)
	FADD4(8, 8, 12)                   // ru + rd
	FADD4(9, 9, 13)
	FADD4(10, 10, 14)
	FADD4(11, 11, 15)
	FMUL4(8, 8, 31)                   // s = ¼·(ru+rd) + ¾·(r0+r1)
	FMLA4(8, 0, 30)                   // s[2j−1]
	FMUL4(9, 9, 31)
	FMLA4(9, 1, 30)                   // s[2j]
	FMUL4(10, 10, 31)
	FMLA4(10, 2, 30)                  // s[2j+1]
	FMUL4(11, 11, 31)
	FMLA4(11, 3, 30)                  // s[2j+2]
	FADD4(16, 9, 10)                  // s[2j] + s[2j+1]
	FADD4(17, 8, 11)                  // s[2j−1] + s[2j+2]
	FMUL4(17, 17, 31)
	FMLA4(17, 16, 30)
	VST1.P [V17.S4], 16(R0)
	SUBS $1, R1
	BNE  loop

done:
	RET
