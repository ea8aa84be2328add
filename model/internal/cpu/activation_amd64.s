//go:build !purego

#include "textflag.h"

// The exponential of activation_exp.go on 8 lanes with AVX2 and FMA. Go
// assembler operand order: sources first, destination last;
// VFMADD213PS m, a, d computes d = a·d + m, VFNMADD231PS m, a, d computes
// d = d − a·m, VBLENDVPS mask, b, a, d picks b where mask's sign bit is set
// and a elsewhere.

DATA actConst<>+0(SB)/4, $0x3fb8aa3b   // log2(e)
DATA actConst<>+4(SB)/4, $0x4b400000   // 1.5·2^23, rounds to an integer
DATA actConst<>+8(SB)/4, $0x3f318000   // ln2 high part, 0.693359375
DATA actConst<>+12(SB)/4, $0xb95e8083  // ln2 low part, -2.12194440e-4
DATA actConst<>+16(SB)/4, $0x39506967  // P0
DATA actConst<>+20(SB)/4, $0x3ab743ce  // P1
DATA actConst<>+24(SB)/4, $0x3c088908  // P2
DATA actConst<>+28(SB)/4, $0x3d2aa9c1  // P3
DATA actConst<>+32(SB)/4, $0x3e2aaaaa  // P4
DATA actConst<>+36(SB)/4, $0x3f000000  // P5
DATA actConst<>+40(SB)/4, $0x3f800000  // 1.0, also 127<<23
DATA actConst<>+44(SB)/4, $0xc2ae0000  // expMinArg, -87
DATA actConst<>+48(SB)/4, $0xbf800000  // -1.0
DATA actConst<>+52(SB)/4, $0x80000000  // sign bit
GLOBL actConst<>(SB), RODATA|NOPTR, $56

// BCAST loads constant i into all lanes of a register.
#define BCAST(i, reg) VBROADCASTSS actConst<>+(4*i)(SB), reg

// EXPSPLIT: from V (non-positive values) in Y1, computes the in-range mask
// in Y2, s = 2^k in Y5 and q = e^r − 1 in Y7. Uses Y3, Y4, Y6, Y8 and the
// constants in Y10 … Y15 (log2e, round, ln2hi, ln2lo, one, minArg).
#define EXPSPLIT \
	VCMPPS $5, Y15, Y1, Y2 \ // not less than -87, or NaN
	VMOVAPS Y10, Y3 \
	VFMADD213PS Y11, Y1, Y3 \ // t = v·log2e + round
	VSUBPS Y11, Y3, Y4 \      // k as a float
	VPSLLD $23, Y3, Y5 \
	VPADDD Y14, Y5, Y5 \      // s = (k + 127) << 23
	VMOVAPS Y1, Y6 \
	VFNMADD231PS Y12, Y4, Y6 \
	VFNMADD231PS Y13, Y4, Y6 \ // r = v − k·ln2hi − k·ln2lo
	BCAST(4, Y7) \
	VBROADCASTSS actConst<>+20(SB), Y8 \
	VFMADD213PS Y8, Y6, Y7 \
	VBROADCASTSS actConst<>+24(SB), Y8 \
	VFMADD213PS Y8, Y6, Y7 \
	VBROADCASTSS actConst<>+28(SB), Y8 \
	VFMADD213PS Y8, Y6, Y7 \
	VBROADCASTSS actConst<>+32(SB), Y8 \
	VFMADD213PS Y8, Y6, Y7 \
	VBROADCASTSS actConst<>+36(SB), Y8 \
	VFMADD213PS Y8, Y6, Y7 \  // P(r)
	VMULPS Y6, Y6, Y8 \
	VFMADD213PS Y6, Y8, Y7    // q = P·r² + r

#define LOADCONSTS \
	BCAST(0, Y10) \
	BCAST(1, Y11) \
	BCAST(2, Y12) \
	BCAST(3, Y13) \
	BCAST(10, Y14) \
	BCAST(11, Y15)

// func eluSIMD(dst, src []float32)
TEXT ·eluSIMD(SB), NOSPLIT, $0-48
	MOVQ dst_base+0(FP), DI
	MOVQ dst_len+8(FP), DX
	MOVQ src_base+24(FP), SI
	ANDQ $-8, DX
	JZ   eluDone
	LOADCONSTS
	XORQ CX, CX

eluLoop:
	VMOVUPS (SI)(CX*4), Y0
	VPSRAD  $31, Y0, Y1
	VANDPS  Y0, Y1, Y1     // v = x where the sign is set, else +0
	EXPSPLIT
	VSUBPS  Y14, Y5, Y9    // s − 1
	VFMADD231PS Y7, Y5, Y9 // e^v − 1 = s·q + (s − 1)
	BCAST(12, Y8)
	VBLENDVPS Y2, Y9, Y8, Y9 // −1 below the range
	VBLENDVPS Y0, Y9, Y0, Y9 // x > 0 (sign clear) keeps x
	VMOVUPS Y9, (DI)(CX*4)
	ADDQ $8, CX
	CMPQ CX, DX
	JLT  eluLoop
	VZEROUPPER

eluDone:
	RET

// func sigmoidScaleSIMD(dst, src []float32, scale float32)
TEXT ·sigmoidScaleSIMD(SB), NOSPLIT, $0-52
	MOVQ dst_base+0(FP), DI
	MOVQ dst_len+8(FP), DX
	MOVQ src_base+24(FP), SI
	ANDQ $-8, DX
	JZ   sigDone
	LOADCONSTS
	VBROADCASTSS scale+48(FP), Y9
	XORQ CX, CX

sigLoop:
	VMOVUPS (SI)(CX*4), Y0
	VBROADCASTSS actConst<>+52(SB), Y1
	VORPS   Y0, Y1, Y1     // v = −|x|
	EXPSPLIT
	VFMADD213PS Y5, Y5, Y7 // e = s·q + s
	VANDPS  Y2, Y7, Y7     // 0 below the range
	VADDPS  Y14, Y7, Y3    // 1 + e
	VDIVPS  Y3, Y9, Y4     // p = scale / (1 + e)
	VMULPS  Y4, Y7, Y6     // e·p
	VBLENDVPS Y0, Y6, Y4, Y6 // x < 0 (sign set): e·p, else p
	VMOVUPS Y6, (DI)(CX*4)
	ADDQ $8, CX
	CMPQ CX, DX
	JLT  sigLoop
	VZEROUPPER

sigDone:
	RET

// func eluBackwardSIMD(dx, dy, y []float32)
TEXT ·eluBackwardSIMD(SB), NOSPLIT, $0-72
	MOVQ dx_base+0(FP), DI
	MOVQ dx_len+8(FP), DX
	MOVQ dy_base+24(FP), SI
	MOVQ y_base+48(FP), BX
	ANDQ $-8, DX
	JZ   eluBackDone
	BCAST(10, Y14)
	XORQ CX, CX

eluBackLoop:
	VMOVUPS (BX)(CX*4), Y0
	VADDPS  Y14, Y0, Y1       // y + 1
	VBLENDVPS Y0, Y1, Y14, Y1 // y + 1 where the sign of y is set, else 1
	VMULPS  (SI)(CX*4), Y1, Y1
	VMOVUPS Y1, (DI)(CX*4)
	ADDQ $8, CX
	CMPQ CX, DX
	JLT  eluBackLoop
	VZEROUPPER

eluBackDone:
	RET
