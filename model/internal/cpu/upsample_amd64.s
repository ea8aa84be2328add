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

// func upBilinearRowAVX2(out, a, b []float32)
TEXT ·upBilinearRowAVX2(SB), NOSPLIT, $0-72
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
