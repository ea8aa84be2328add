//go:build !purego

#include "textflag.h"

DATA upConst<>+0(SB)/4, $0x3f400000 // 0.75
DATA upConst<>+4(SB)/4, $0x3e800000 // 0.25
GLOBL upConst<>(SB), RODATA|NOPTR, $8

// MIX computes ¾·a + ¼·b of the 8 columns at byte offset off from SI (a)
// and BX (b) into reg, using Y13.
#define MIX(off, reg) \
	VMULPS off(BX)(CX*4), Y15, reg \
	VMOVUPS off(SI)(CX*4), Y13 \
	VFMADD231PS Y14, Y13, reg

// func upBilinearRowSIMD(out, a, b []float32)
TEXT ·upBilinearRowSIMD(SB), NOSPLIT, $0-72
	MOVQ out_base+0(FP), DI
	MOVQ out_len+8(FP), DX
	MOVQ a_base+24(FP), SI
	MOVQ b_base+48(FP), BX
	SHRQ $1, DX                 // input columns to do
	JZ   upDone
	VBROADCASTSS upConst<>+0(SB), Y14
	VBROADCASTSS upConst<>+4(SB), Y15
	XORQ CX, CX                 // column j−1, from 0

upLoop:
	MIX(0, Y0)                  // m[j−1 …]
	MIX(4, Y1)                  // m[j …]
	MIX(8, Y2)                  // m[j+1 …]
	VMULPS Y14, Y1, Y1          // ¾·m[j]
	VMOVAPS Y1, Y3
	VFMADD231PS Y15, Y0, Y3     // even = ¾·m[j] + ¼·m[j−1]
	VMOVAPS Y1, Y4
	VFMADD231PS Y15, Y2, Y4     // odd  = ¾·m[j] + ¼·m[j+1]
	VUNPCKLPS Y4, Y3, Y5        // e0 o0 e1 o1 | e4 o4 e5 o5
	VUNPCKHPS Y4, Y3, Y6        // e2 o2 e3 o3 | e6 o6 e7 o7
	VPERM2F128 $0x20, Y6, Y5, Y7
	VPERM2F128 $0x31, Y6, Y5, Y8
	VMOVUPS Y7, (DI)(CX*8)
	VMOVUPS Y8, 32(DI)(CX*8)
	ADDQ $8, CX
	CMPQ CX, DX
	JLT  upLoop
	VZEROUPPER

upDone:
	RET

// COLSUM computes s = ¾·(r0+r1) + ¼·(ru+rd) of the 8 output columns at
// byte offset off (plus 8·CX) into reg, using Y10.
#define COLSUM(off, reg) \
	VMOVUPS off(R8)(CX*8), Y10 \
	VADDPS off(R9)(CX*8), Y10, Y10 \
	VMOVUPS off(R10)(CX*8), reg \
	VADDPS off(R11)(CX*8), reg, reg \
	VMULPS Y15, reg, reg \
	VFMADD231PS Y14, Y10, reg

// EVEN and ODD gather the even or odd elements of the 16 values lo, hi.
#define EVEN(lo, hi, reg) \
	VSHUFPS $0x88, hi, lo, reg \
	VPERMPD $0xD8, reg, reg
#define ODD(lo, hi, reg) \
	VSHUFPS $0xDD, hi, lo, reg \
	VPERMPD $0xD8, reg, reg

// func upBilinearBackRowSIMD(g, r0, r1, ru, rd []float32)
TEXT ·upBilinearBackRowSIMD(SB), NOSPLIT, $0-120
	MOVQ g_base+0(FP), DI
	MOVQ g_len+8(FP), DX
	MOVQ r0_base+24(FP), R8
	MOVQ r1_base+48(FP), R9
	MOVQ ru_base+72(FP), R10
	MOVQ rd_base+96(FP), R11
	TESTQ DX, DX
	JZ   upBackDone
	VBROADCASTSS upConst<>+0(SB), Y14
	VBROADCASTSS upConst<>+4(SB), Y15
	XORQ CX, CX                 // column j−1, from 0

upBackLoop:
	COLSUM(0, Y0)               // s[2j−2 …]
	COLSUM(32, Y1)
	COLSUM(8, Y2)               // s[2j …]
	COLSUM(40, Y3)
	COLSUM(16, Y4)              // s[2j+2 …]
	COLSUM(48, Y5)
	ODD(Y0, Y1, Y6)             // s[2j−1]
	EVEN(Y2, Y3, Y7)            // s[2j]
	ODD(Y2, Y3, Y8)             // s[2j+1]
	EVEN(Y4, Y5, Y9)            // s[2j+2]
	VADDPS Y8, Y7, Y7
	VADDPS Y9, Y6, Y6
	VMULPS Y15, Y6, Y6
	VFMADD231PS Y14, Y7, Y6     // ¾·(s[2j]+s[2j+1]) + ¼·(s[2j−1]+s[2j+2])
	VMOVUPS Y6, (DI)(CX*4)
	ADDQ $8, CX
	CMPQ CX, DX
	JLT  upBackLoop
	VZEROUPPER

upBackDone:
	RET
