//go:build !purego

#include "textflag.h"

// func sumBlocks2x2AVX2(g, r0, r1 []float32, scale float32)
TEXT ·sumBlocks2x2AVX2(SB), NOSPLIT, $0-76
	MOVQ g_base+0(FP), DI
	MOVQ g_len+8(FP), DX
	MOVQ r0_base+24(FP), SI
	MOVQ r1_base+48(FP), BX
	TESTQ DX, DX
	JZ   sumDone
	VBROADCASTSS scale+72(FP), Y15
	XORQ CX, CX

sumLoop:
	VMOVUPS (SI)(CX*8), Y0
	VMOVUPS 32(SI)(CX*8), Y1
	VMOVUPS (BX)(CX*8), Y2
	VMOVUPS 32(BX)(CX*8), Y3
	VSHUFPS $0x88, Y1, Y0, Y4   // r0 even columns, lanes in order 0 1 4 5 2 3 6 7
	VSHUFPS $0xDD, Y1, Y0, Y5   // r0 odd
	VSHUFPS $0x88, Y3, Y2, Y6   // r1 even
	VSHUFPS $0xDD, Y3, Y2, Y7   // r1 odd
	VADDPS Y5, Y4, Y4
	VADDPS Y6, Y4, Y4
	VADDPS Y7, Y4, Y4           // ((a + b) + c) + d
	VMULPS Y15, Y4, Y4
	VPERMPD $0xD8, Y4, Y4       // lanes back in column order
	VMOVUPS Y4, (DI)(CX*4)
	ADDQ $8, CX
	CMPQ CX, DX
	JLT  sumLoop
	VZEROUPPER

sumDone:
	RET

// func spreadBlocks2x2AVX2(r0, r1, v []float32, scale float32)
TEXT ·spreadBlocks2x2AVX2(SB), NOSPLIT, $0-76
	MOVQ r0_base+0(FP), DI
	MOVQ r1_base+24(FP), BX
	MOVQ v_base+48(FP), SI
	MOVQ v_len+56(FP), DX
	TESTQ DX, DX
	JZ   spreadDone
	VBROADCASTSS scale+72(FP), Y15
	XORQ CX, CX

spreadLoop:
	VMULPS (SI)(CX*4), Y15, Y0
	VUNPCKLPS Y0, Y0, Y1        // v0 v0 v1 v1 | v4 v4 v5 v5
	VUNPCKHPS Y0, Y0, Y2        // v2 v2 v3 v3 | v6 v6 v7 v7
	VPERM2F128 $0x20, Y2, Y1, Y3
	VPERM2F128 $0x31, Y2, Y1, Y4
	VMOVUPS Y3, (DI)(CX*8)
	VMOVUPS Y4, 32(DI)(CX*8)
	VMOVUPS Y3, (BX)(CX*8)
	VMOVUPS Y4, 32(BX)(CX*8)
	ADDQ $8, CX
	CMPQ CX, DX
	JLT  spreadLoop
	VZEROUPPER

spreadDone:
	RET
