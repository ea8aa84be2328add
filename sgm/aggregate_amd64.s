//go:build !purego

#include "textflag.h"

// func pathRunAVX2(cur, prev *uint16, curStep, prevStep int, cost *uint8, sum *uint16, costStep int, p2, pmin *uint16, pminStep int, cmin *uint16, cminStep, n, np int, p1 uint16)
//
// The steps of pathRun (aggregate.go), 16 levels per instruction. The
// neighbours d−1 and d+1 come from the aligned loads of the previous
// vector by lane shifts (VPERM2I128 + VPALIGNR), so that a step reading the
// vector the step before it stored gets it from the store buffer.
TEXT ·pathRunAVX2(SB), NOSPLIT, $0-114
	MOVQ cur+0(FP), DI
	MOVQ prev+8(FP), SI
	MOVQ curStep+16(FP), R13
	SHLQ $1, R13
	MOVQ prevStep+24(FP), R14
	SHLQ $1, R14
	MOVQ cost+32(FP), R8
	MOVQ sum+40(FP), R9
	MOVQ costStep+48(FP), DX
	MOVQ p2+56(FP), R10
	MOVQ pmin+64(FP), R11
	MOVQ cmin+80(FP), R12
	MOVQ n+96(FP), CX
	MOVQ np+104(FP), BX
	MOVWLZX p1+112(FP), AX
	MOVQ AX, X15
	VPBROADCASTW X15, Y15          // P1
	VPCMPEQW Y11, Y11, Y11         // noPath in every lane

step:
	MOVWLZX (R11), AX
	MOVQ AX, X14
	VPBROADCASTW X14, Y14          // previous minimum
	MOVWLZX (R10), AX
	MOVQ AX, X13
	VPBROADCASTW X13, Y13
	VPADDUSW Y14, Y13, Y13         // previous minimum + P2, saturated
	VMOVDQU Y11, Y12               // running minimum
	VMOVDQU Y11, Y4                // previous vector's lanes d−16 … d−1
	VMOVDQU (SI), Y5               // lanes d … d+15
	XORQ AX, AX

level:
	VMOVDQU 32(SI)(AX*2), Y6       // lanes d+16 … d+31 (the sentinel tail at the end)
	VPERM2I128 $0x21, Y5, Y4, Y7
	VPALIGNR $14, Y7, Y5, Y7       // prev[d−1]
	VPERM2I128 $0x21, Y6, Y5, Y8
	VPALIGNR $2, Y5, Y8, Y8        // prev[d+1]
	VPADDUSW Y15, Y7, Y7
	VPADDUSW Y15, Y8, Y8
	VPMINUW Y7, Y5, Y0
	VPMINUW Y8, Y0, Y0
	VPMINUW Y13, Y0, Y0
	VPSUBW Y14, Y0, Y0
	VPMOVZXBW (R8)(AX*1), Y3
	VPADDW Y3, Y0, Y0
	VMOVDQU Y0, (DI)(AX*2)
	VPADDW (R9)(AX*2), Y0, Y1
	VMOVDQU Y1, (R9)(AX*2)
	VPMINUW Y0, Y12, Y12
	VMOVDQU Y5, Y4
	VMOVDQU Y6, Y5
	ADDQ $16, AX
	CMPQ AX, BX
	JLT level

	VEXTRACTI128 $1, Y12, X0
	VPMINUW X0, X12, X0
	VPHMINPOSUW X0, X0
	MOVQ X0, AX
	MOVW AX, (R12)

	ADDQ R13, DI
	ADDQ R14, SI
	ADDQ DX, R8
	LEAQ (R9)(DX*2), R9
	ADDQ $2, R10
	MOVQ pminStep+72(FP), AX
	LEAQ (R11)(AX*2), R11
	MOVQ cminStep+88(FP), AX
	LEAQ (R12)(AX*2), R12
	DECQ CX
	JNZ step

	VZEROUPPER
	RET

// func darkerAVX2(acc, n, c *uint8, count int)
//
// darkerGeneric (census.go) on count bytes, a multiple of 32: acc = acc<<1 |
// (n < c), the comparison unsigned (n < c when max(n, c) ≠ n).
TEXT ·darkerAVX2(SB), NOSPLIT, $0-32
	MOVQ acc+0(FP), DI
	MOVQ n+8(FP), SI
	MOVQ c+16(FP), DX
	MOVQ count+24(FP), CX
	XORQ AX, AX
	VPCMPEQB Y15, Y15, Y15
	VPABSB Y15, Y15                // 1 in every byte

loop:
	VMOVDQU (SI)(AX*1), Y0         // n
	VMOVDQU (DX)(AX*1), Y1         // c
	VPMAXUB Y1, Y0, Y2
	VPCMPEQB Y0, Y2, Y2            // n ≥ c
	VPANDN Y15, Y2, Y2             // 1 where n < c
	VMOVDQU (DI)(AX*1), Y3
	VPADDB Y3, Y3, Y3              // acc << 1
	VPOR Y2, Y3, Y3
	VMOVDQU Y3, (DI)(AX*1)
	ADDQ $32, AX
	CMPQ AX, CX
	JLT loop

	VZEROUPPER
	RET
