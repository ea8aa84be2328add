//go:build !purego

#include "textflag.h"

// NEXT_ROUND moves the pointers of pathRunAVX2 and pathRunAVX512 (same
// arguments and registers) from the end of a round of n steps to the start
// of the next: each by outer − n·step. It leaves n in CX.
#define NEXT_ROUND \
	MOVQ n+104(FP), CX; \
	MOVQ curStep+16(FP), AX; IMULQ CX, AX; NEGQ AX; ADDQ curOuter+136(FP), AX; LEAQ (DI)(AX*2), DI; \
	MOVQ prevStep+24(FP), AX; IMULQ CX, AX; NEGQ AX; ADDQ prevOuter+144(FP), AX; LEAQ (SI)(AX*2), SI; \
	MOVQ costStep+56(FP), AX; IMULQ CX, AX; NEGQ AX; ADDQ costOuter+152(FP), AX; \
	ADDQ AX, R8; LEAQ (R9)(AX*2), R9; LEAQ (DX)(AX*2), DX; \
	MOVQ p2Outer+160(FP), AX; SUBQ CX, AX; LEAQ (R10)(AX*2), R10; \
	MOVQ pminStep+80(FP), AX; IMULQ CX, AX; NEGQ AX; ADDQ pminOuter+168(FP), AX; LEAQ (R11)(AX*2), R11; \
	MOVQ cminStep+96(FP), AX; IMULQ CX, AX; NEGQ AX; ADDQ cminOuter+176(FP), AX; LEAQ (R12)(AX*2), R12

// func pathRunAVX2(cur, prev *uint16, curStep, prevStep int, cost *uint8, sum, base *uint16, costStep int, p2, pmin *uint16, pminStep int, cmin *uint16, cminStep, n, np int, p1 uint16, store bool,
//	m, curOuter, prevOuter, costOuter, p2Outer, pminOuter, cminOuter int)
//
// The steps of pathRun (aggregate.go), 16 levels per instruction. The
// neighbours d−1 and d+1 come from the aligned loads of the previous
// vector by lane shifts (VPERM2I128 + VPALIGNR), so that a step reading the
// vector the step before it stored gets it from the store buffer. After
// each round of n steps every pointer moves to the next round's start (the
// m argument is the countdown).
TEXT ·pathRunAVX2(SB), NOSPLIT, $0-184
	MOVQ cur+0(FP), DI
	MOVQ prev+8(FP), SI
	MOVQ curStep+16(FP), R13
	SHLQ $1, R13
	MOVQ prevStep+24(FP), R14
	SHLQ $1, R14
	MOVQ cost+32(FP), R8
	MOVQ sum+40(FP), R9
	MOVQ base+48(FP), DX
	MOVQ p2+64(FP), R10
	MOVQ pmin+72(FP), R11
	MOVQ cmin+88(FP), R12
	MOVQ n+104(FP), CX
	MOVQ np+112(FP), BX
	MOVWLZX p1+120(FP), AX
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
	CMPB store+122(FP), $0
	JNE stored
	VPADDW (DX)(AX*2), Y0, Y1
	VMOVDQU Y1, (R9)(AX*2)
	JMP added
stored:
	VMOVDQU Y0, (R9)(AX*2)
added:
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
	MOVQ costStep+56(FP), AX
	ADDQ AX, R8
	LEAQ (R9)(AX*2), R9
	LEAQ (DX)(AX*2), DX
	ADDQ $2, R10
	MOVQ pminStep+80(FP), AX
	LEAQ (R11)(AX*2), R11
	MOVQ cminStep+96(FP), AX
	LEAQ (R12)(AX*2), R12
	DECQ CX
	JNZ step

	DECQ m+128(FP)
	JZ done
	NEXT_ROUND
	JMP step

done:
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

DATA lanes<>+0(SB)/8, $0x0003000200010000
DATA lanes<>+8(SB)/8, $0x0007000600050004
DATA lanes<>+16(SB)/8, $0x000b000a00090008
DATA lanes<>+24(SB)/8, $0x000f000e000d000c
GLOBL lanes<>(SB), RODATA|NOPTR, $32

// func winnersAVX2(sum *uint16, np, n, w int, best *int32, bestV, second *uint16)
//
// winnersGeneric (select.go); np a multiple of 16, 1 ≤ n ≤ np.
TEXT ·winnersAVX2(SB), NOSPLIT, $0-56
	MOVQ sum+0(FP), SI
	MOVQ np+8(FP), BX
	MOVQ n+16(FP), AX
	DECQ AX
	MOVQ AX, X9
	VPBROADCASTW X9, Y9            // n−1: lanes above it are unused
	MOVQ w+24(FP), CX
	MOVQ best+32(FP), R8
	MOVQ bestV+40(FP), R9
	MOVQ second+48(FP), R10
	VMOVDQU lanes<>(SB), Y8        // 0 … 15
	MOVQ $16, AX
	MOVQ AX, X7
	VPBROADCASTW X7, Y7            // 16
	VPCMPEQW Y6, Y6, Y6            // noPath

pixel:
	// Pass 1: the smallest sum.
	VMOVDQU Y6, Y12
	VMOVDQU Y8, Y10                // lane levels
	XORQ AX, AX
min1:
	VMOVDQU (SI)(AX*2), Y0
	VPCMPGTW Y9, Y10, Y1
	VPOR Y1, Y0, Y0
	VPMINUW Y0, Y12, Y12
	VPADDW Y7, Y10, Y10
	ADDQ $16, AX
	CMPQ AX, BX
	JLT min1
	VEXTRACTI128 $1, Y12, X0
	VPMINUW X0, X12, X0
	VPHMINPOSUW X0, X0
	MOVQ X0, DX
	MOVWLZX DX, DX                 // the smallest sum
	MOVW DX, (R9)
	MOVQ DX, X11
	VPBROADCASTW X11, Y11

	// Pass 2: its first level.
	VMOVDQU Y8, Y10
	XORQ AX, AX
find:
	VMOVDQU (SI)(AX*2), Y0
	VPCMPEQW Y11, Y0, Y0
	VPCMPGTW Y9, Y10, Y1
	VPANDN Y0, Y1, Y0
	VPMOVMSKB Y0, DX
	TESTL DX, DX
	JNZ found
	VPADDW Y7, Y10, Y10
	ADDQ $16, AX
	CMPQ AX, BX
	JLT find
found:
	BSFL DX, DX
	SHRL $1, DX
	ADDQ AX, DX                    // level of the smallest sum
	MOVL DX, (R8)

	// Pass 3: the smallest sum more than one level away.
	LEAQ -2(DX), AX
	MOVQ AX, X13
	VPBROADCASTW X13, Y13          // best − 2
	LEAQ 2(DX), AX
	MOVQ AX, X14
	VPBROADCASTW X14, Y14          // best + 2
	VMOVDQU Y6, Y12
	VMOVDQU Y8, Y10
	XORQ AX, AX
min2:
	VMOVDQU (SI)(AX*2), Y0
	VPCMPGTW Y9, Y10, Y1           // unused lane
	VPCMPGTW Y13, Y10, Y2          // level > best − 2
	VPCMPGTW Y10, Y14, Y3          // level < best + 2
	VPAND Y3, Y2, Y2
	VPOR Y2, Y1, Y1
	VPOR Y1, Y0, Y0
	VPMINUW Y0, Y12, Y12
	VPADDW Y7, Y10, Y10
	ADDQ $16, AX
	CMPQ AX, BX
	JLT min2
	VEXTRACTI128 $1, Y12, X0
	VPMINUW X0, X12, X0
	VPHMINPOSUW X0, X0
	MOVQ X0, DX
	MOVW DX, (R10)

	LEAQ (SI)(BX*2), SI
	ADDQ $4, R8
	ADDQ $2, R9
	ADDQ $2, R10
	DECQ CX
	JNZ pixel

	VZEROUPPER
	RET

// func rightWinnersAVX2(sum *uint16, np, n, w, lo int, rarg *int32, t, a *uint16)
//
// rightWinnersGeneric (select.go) by a sliding vector: after left pixel x,
// lane d of t holds the best sum so far of right pixel x−lo−d over levels
// ≤ d and lane d of a its level; lane n−1 is then final. Before each pixel
// both shift up one lane. The caller sets rarg to −1 and writes the lanes
// still open after the last pixel. np a multiple of 16, 1 ≤ n ≤ np.
TEXT ·rightWinnersAVX2(SB), NOSPLIT, $0-64
	MOVQ sum+0(FP), SI
	MOVQ np+8(FP), BX
	MOVQ n+16(FP), R11
	MOVQ w+24(FP), CX
	MOVQ lo+32(FP), R12
	LEAQ -1(R12)(R11*1), R12       // lo + n − 1: right pixel of lane n−1 is x − R12
	MOVQ rarg+40(FP), R8
	MOVQ t+48(FP), DI
	MOVQ a+56(FP), R9
	VMOVDQU lanes<>(SB), Y8
	MOVQ $16, AX
	MOVQ AX, X7
	VPBROADCASTW X7, Y7
	VPCMPEQW Y6, Y6, Y6
	VPXOR Y5, Y5, Y5
	XORQ AX, AX
clear:
	VMOVDQU Y6, (DI)(AX*2)
	VMOVDQU Y5, (R9)(AX*2)
	ADDQ $16, AX
	CMPQ AX, BX
	JLT clear

	XORQ R13, R13                  // x
pixel:
	// Vectors from the top down, so that each shift reads the vector below
	// before it changes.
	MOVQ BX, AX
	SUBQ $16, AX                   // first lane of the top vector
	MOVQ AX, DX
	MOVQ DX, X10
	VPBROADCASTW X10, Y10
	VPADDW Y8, Y10, Y10            // its lane levels
vector:
	VMOVDQU (DI)(AX*2), Y0         // t lanes
	VMOVDQU (R9)(AX*2), Y1         // a lanes
	VMOVDQU Y6, Y2
	VMOVDQU Y5, Y3
	TESTQ AX, AX
	JZ bottom
	VMOVDQU -32(DI)(AX*2), Y2
	VMOVDQU -32(R9)(AX*2), Y3
bottom:
	VPERM2I128 $0x21, Y0, Y2, Y2
	VPALIGNR $14, Y2, Y0, Y2       // t shifted up one lane
	VPERM2I128 $0x21, Y1, Y3, Y3
	VPALIGNR $14, Y3, Y1, Y3       // a shifted up one lane
	VMOVDQU (SI)(AX*2), Y4         // this pixel's sums
	VPMINUW Y4, Y2, Y0
	VPCMPEQW Y2, Y0, Y1            // no better: keep the older (smaller) level
	VPBLENDVB Y1, Y3, Y10, Y1
	VMOVDQU Y0, (DI)(AX*2)
	VMOVDQU Y1, (R9)(AX*2)
	VPSUBW Y7, Y10, Y10
	SUBQ $16, AX
	JGE vector

	MOVQ R13, DX
	SUBQ R12, DX                   // right pixel of lane n−1
	JL next
	MOVWLZX -2(R9)(R11*2), AX
	MOVL AX, (R8)(DX*4)
next:
	LEAQ (SI)(BX*2), SI
	INCQ R13
	CMPQ R13, CX
	JLT pixel

	VZEROUPPER
	RET

// func costRowAVX512(cost *uint8, np int, cl, rev *uint64, w, lo int)
//
// The Hamming distances of costRowGeneric (census.go) at every level
// 0 … np−1, 8 at a time: rev holds the right row's census words reversed,
// so that pixel x's levels read rev[w−1−x+lo …] upwards. The caller
// overwrites the levels without a right pixel.
TEXT ·costRowAVX512(SB), NOSPLIT, $0-48
	MOVQ cost+0(FP), DI
	MOVQ np+8(FP), BX
	MOVQ cl+16(FP), R8
	MOVQ rev+24(FP), SI
	MOVQ w+32(FP), CX
	MOVQ lo+40(FP), AX
	LEAQ -1(CX)(AX*1), DX
	LEAQ (SI)(DX*8), SI            // &rev[w−1+lo]: pixel 0's level 0

pixel:
	VPBROADCASTQ (R8), Z15
	XORQ AX, AX
level:
	VMOVDQU64 (SI)(AX*8), Z0
	VPXORQ Z15, Z0, Z0
	VPOPCNTQ Z0, Z0
	VPMOVQB Z0, X0
	MOVQ X0, (DI)(AX*1)
	ADDQ $8, AX
	CMPQ AX, BX
	JLT level

	ADDQ BX, DI
	ADDQ $8, R8
	SUBQ $8, SI
	DECQ CX
	JNZ pixel

	VZEROUPPER
	RET

// func pathRunAVX512(cur, prev *uint16, curStep, prevStep int, cost *uint8, sum, base *uint16, costStep int, p2, pmin *uint16, pminStep int, cmin *uint16, cminStep, n, np int, p1 uint16, store, chained bool,
//	m, curOuter, prevOuter, costOuter, p2Outer, pminOuter, cminOuter int)
//
// pathRunAVX2 with 32 levels per instruction (AVX-512 BW): blocks of 32
// levels, then a block of 16 when np is not a multiple of 32, whose upper
// lanes hold noPath. The neighbours d−1 and d+1 come from the previous and
// next blocks by VALIGNQ + VPALIGNR; every block is loaded once, with the
// width it was stored with, so that a chained step reads the vector the
// step before stored from the store buffer. With chained (each step's
// pmin is the cmin the step before wrote; one round), the minimum goes to
// the next step in a register, not through memory. After each round of n
// steps every pointer moves to the next round's start (the m argument is
// the countdown).
TEXT ·pathRunAVX512(SB), NOSPLIT, $0-184
	MOVQ cur+0(FP), DI
	MOVQ prev+8(FP), SI
	MOVQ cost+32(FP), R8
	MOVQ sum+40(FP), R9
	MOVQ base+48(FP), DX
	MOVQ p2+64(FP), R10
	MOVQ pmin+72(FP), R11
	MOVQ cmin+88(FP), R12
	MOVQ n+104(FP), CX
	MOVQ np+112(FP), BX
	MOVQ BX, R14
	ANDQ $16, R14                  // a block of 16 at the end
	ANDQ $-32, BX                  // levels in blocks of 32
	MOVWLZX p1+120(FP), AX
	VPBROADCASTW AX, Z15           // P1
	VPTERNLOGD $0xff, Z11, Z11, Z11 // noPath in every lane
	VPBROADCASTW (R11), Z14        // previous minimum

step:
	VPBROADCASTW (R10), Z13
	VPADDUSW Z14, Z13, Z13         // previous minimum + P2, saturated
	VMOVDQA64 Z11, Z12             // running minimum
	VMOVDQA64 Z11, Z4              // previous block
	XORQ AX, AX
	TESTQ BX, BX
	JZ first16
	VMOVDQU64 (SI), Z5             // this block
	JMP level
first16:
	VMOVDQU (SI), Y5
	VINSERTI64X4 $1, Y11, Z5, Z5
	JMP last16

level:
	LEAQ 32(AX), R13
	VMOVDQA64 Z11, Z6              // next block: none
	CMPQ R13, BX
	JGE partial
	VMOVDQU64 64(SI)(AX*2), Z6     // 32 levels
	JMP compute
partial:
	TESTQ R14, R14
	JZ compute
	VMOVDQU 64(SI)(AX*2), Y6       // 16 levels
	VINSERTI64X4 $1, Y11, Z6, Z6
compute:
	VALIGNQ $6, Z4, Z5, Z7
	VPALIGNR $14, Z7, Z5, Z7       // prev[d−1]
	VALIGNQ $2, Z5, Z6, Z8
	VPALIGNR $2, Z5, Z8, Z8        // prev[d+1]
	VPADDUSW Z15, Z7, Z7
	VPADDUSW Z15, Z8, Z8
	VPMINUW Z7, Z5, Z0
	VPMINUW Z8, Z0, Z0
	VPMINUW Z13, Z0, Z0
	VPSUBW Z14, Z0, Z0
	VPMOVZXBW (R8)(AX*1), Z3
	VPADDW Z3, Z0, Z0
	VMOVDQU64 Z0, (DI)(AX*2)
	CMPB store+122(FP), $0
	JNE stored
	VPADDW (DX)(AX*2), Z0, Z1
	VMOVDQU64 Z1, (R9)(AX*2)
	JMP added
stored:
	VMOVDQU64 Z0, (R9)(AX*2)
added:
	VPMINUW Z0, Z12, Z12
	VMOVDQA64 Z5, Z4
	VMOVDQA64 Z6, Z5
	MOVQ R13, AX
	CMPQ AX, BX
	JLT level

	VEXTRACTI64X4 $1, Z12, Y1
	VPMINUW Y1, Y12, Y12           // the running minimum in 16 lanes
	TESTQ R14, R14
	JZ reduce

last16:
	VALIGNQ $6, Z4, Z5, Z7
	VPALIGNR $14, Z7, Z5, Z7
	VALIGNQ $2, Z5, Z11, Z8
	VPALIGNR $2, Z5, Z8, Z8
	VPADDUSW Z15, Z7, Z7
	VPADDUSW Z15, Z8, Z8
	VPMINUW Z7, Z5, Z0
	VPMINUW Z8, Z0, Z0
	VPMINUW Z13, Z0, Z0
	VPSUBW Z14, Z0, Z0
	VPMOVZXBW (R8)(AX*1), Y3
	VPADDW Y3, Y0, Y0
	VMOVDQU Y0, (DI)(AX*2)
	CMPB store+122(FP), $0
	JNE stored16
	VPADDW (DX)(AX*2), Y0, Y1
	VMOVDQU Y1, (R9)(AX*2)
	JMP added16
stored16:
	VMOVDQU Y0, (R9)(AX*2)
added16:
	VPMINUW Y0, Y12, Y12

reduce:
	VEXTRACTI128 $1, Y12, X0
	VPMINUW X0, X12, X0
	VPHMINPOSUW X0, X0
	MOVQ X0, AX
	MOVW AX, (R12)
	VPBROADCASTW X0, Z14           // the next step's previous minimum, if chained

	MOVQ curStep+16(FP), AX
	LEAQ (DI)(AX*2), DI
	MOVQ prevStep+24(FP), AX
	LEAQ (SI)(AX*2), SI
	MOVQ costStep+56(FP), AX
	ADDQ AX, R8
	LEAQ (R9)(AX*2), R9
	LEAQ (DX)(AX*2), DX
	ADDQ $2, R10
	MOVQ pminStep+80(FP), AX
	LEAQ (R11)(AX*2), R11
	MOVQ cminStep+96(FP), AX
	LEAQ (R12)(AX*2), R12
	DECQ CX
	JZ round
	CMPB chained+123(FP), $0
	JNE step
	VPBROADCASTW (R11), Z14
	JMP step

round:
	DECQ m+128(FP)
	JZ done
	NEXT_ROUND
	VPBROADCASTW (R11), Z14
	JMP step

done:
	VZEROUPPER
	RET

DATA lanes32<>+0(SB)/8, $0x0003000200010000
DATA lanes32<>+8(SB)/8, $0x0007000600050004
DATA lanes32<>+16(SB)/8, $0x000b000a00090008
DATA lanes32<>+24(SB)/8, $0x000f000e000d000c
DATA lanes32<>+32(SB)/8, $0x0013001200110010
DATA lanes32<>+40(SB)/8, $0x0017001600150014
DATA lanes32<>+48(SB)/8, $0x001b001a00190018
DATA lanes32<>+56(SB)/8, $0x001f001e001d001c
GLOBL lanes32<>(SB), RODATA|NOPTR, $64

// func winnersAVX512(sum *uint16, np, n, w int, best *int32, bestV, second *uint16)
//
// winnersGeneric (select.go), 32 levels per instruction (AVX-512 BW); np a
// multiple of 16, np−16 < n ≤ np, so that only the last block of 32 (or
// 16) levels has unused lanes: it is loaded under the mask of its used
// lanes, the others holding noPath.
TEXT ·winnersAVX512(SB), NOSPLIT, $0-56
	MOVQ sum+0(FP), SI
	MOVQ np+8(FP), BX
	MOVQ n+16(FP), R11
	MOVQ best+32(FP), R8
	MOVQ bestV+40(FP), R9
	MOVQ second+48(FP), R10
	LEAQ -1(BX), R12
	ANDQ $-32, R12                 // first level of the last block
	MOVQ R11, CX
	SUBQ R12, CX                   // its used lanes, 1 … 32
	MOVQ $1, DX
	SHLQ CX, DX
	DECQ DX                        // (1 << used) − 1, 64-bit: all 32 when used = 32
	KMOVD DX, K1                   // used lanes of the last block
	MOVQ w+24(FP), CX
	VPTERNLOGD $0xff, Z6, Z6, Z6   // noPath
	VMOVDQU64 lanes32<>(SB), Z8    // 0 … 31
	MOVQ $32, AX
	VPBROADCASTW AX, Z7            // 32

pixel:
	// Pass 1: the smallest sum.
	VMOVDQA64 Z6, Z12
	XORQ AX, AX
	CMPQ AX, R12
	JGE last1
full1:
	VPMINUW (SI)(AX*2), Z12, Z12
	ADDQ $32, AX
	CMPQ AX, R12
	JLT full1
last1:
	VMOVDQA64 Z6, Z0
	VMOVDQU16 (SI)(AX*2), K1, Z0
	VPMINUW Z0, Z12, Z12
	VEXTRACTI64X4 $1, Z12, Y1
	VPMINUW Y1, Y12, Y12
	VEXTRACTI128 $1, Y12, X1
	VPMINUW X1, X12, X1
	VPHMINPOSUW X1, X1
	MOVQ X1, DX
	MOVW DX, (R9)                  // the smallest sum
	VPBROADCASTW X1, Z11

	// Pass 2: its first level.
	XORQ AX, AX
find:
	CMPQ AX, R12
	JGE findlast
	VPCMPEQW (SI)(AX*2), Z11, K2
	KMOVD K2, DX
	TESTL DX, DX
	JNZ found
	ADDQ $32, AX
	JMP find
findlast:
	VMOVDQA64 Z6, Z0
	VMOVDQU16 (SI)(AX*2), K1, Z0
	VPCMPEQW Z0, Z11, K2
	KMOVD K2, DX
found:
	BSFL DX, DX
	ADDQ AX, DX                    // level of the smallest sum
	MOVL DX, (R8)

	// Pass 3: the smallest sum more than one level away.
	LEAQ -2(DX), AX
	VPBROADCASTW AX, Z13           // best − 2
	LEAQ 2(DX), AX
	VPBROADCASTW AX, Z14           // best + 2
	VMOVDQA64 Z6, Z12
	VMOVDQA64 Z8, Z10              // lane levels
	XORQ AX, AX
	CMPQ AX, R12
	JGE last3
full3:
	VMOVDQU64 (SI)(AX*2), Z0
	VPCMPW $6, Z13, Z10, K3        // level > best − 2
	VPCMPW $1, Z14, Z10, K3, K3    // and level < best + 2
	VMOVDQU16 Z6, K3, Z0
	VPMINUW Z0, Z12, Z12
	VPADDW Z7, Z10, Z10
	ADDQ $32, AX
	CMPQ AX, R12
	JLT full3
last3:
	VMOVDQA64 Z6, Z0
	VMOVDQU16 (SI)(AX*2), K1, Z0
	VPCMPW $6, Z13, Z10, K3
	VPCMPW $1, Z14, Z10, K3, K3
	VMOVDQU16 Z6, K3, Z0
	VPMINUW Z0, Z12, Z12
	VEXTRACTI64X4 $1, Z12, Y1
	VPMINUW Y1, Y12, Y12
	VEXTRACTI128 $1, Y12, X1
	VPMINUW X1, X12, X1
	VPHMINPOSUW X1, X1
	MOVQ X1, DX
	MOVW DX, (R10)

	LEAQ (SI)(BX*2), SI
	ADDQ $4, R8
	ADDQ $2, R9
	ADDQ $2, R10
	DECQ CX
	JNZ pixel

	VZEROUPPER
	RET
