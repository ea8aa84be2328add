//go:build !purego

#include "textflag.h"
#include "neon_arm64.h"

// The exponential of activation_exp.go on 4 lanes with ASIMD. Go operand
// order is reversed from Arm's: VBIT Vm, Vn, Vd inserts Vn into Vd where
// Vm is set; VBIF Vm, Vn, Vd inserts Vn where Vm is clear. The FP macros
// of neon_arm64.h take Arm order (destination first).

// DUPC broadcasts the 32-bit constant bits into all lanes of vector v.
#define DUPC(bits, v) MOVW $bits, R9; VDUP R9, v.S4

// LOADCONSTS: V16 log2(e), V17 1.5·2^23 (rounds to an integer), V18, V19
// ln2 in two parts, V20 … V25 the polynomial P0 … P5, V26 1.0 (also
// 127<<23), V27 expMinArg = −87, V28 −1.0.
#define LOADCONSTS \
	DUPC(0x3fb8aa3b, V16) \
	DUPC(0x4b400000, V17) \
	DUPC(0x3f318000, V18) \
	DUPC(0xb95e8083, V19) \
	DUPC(0x39506967, V20) \
	DUPC(0x3ab743ce, V21) \
	DUPC(0x3c088908, V22) \
	DUPC(0x3d2aa9c1, V23) \
	DUPC(0x3e2aaaaa, V24) \
	DUPC(0x3f000000, V25) \
	DUPC(0x3f800000, V26) \
	DUPC(0xc2ae0000, V27) \
	DUPC(0xbf800000, V28)

// EXPSPLIT: from v (non-positive values) in V1, computes the below-range
// mask in V2 (v < −87; false for NaN, so NaN propagates), s = 2^k in V5
// and q = e^r − 1 in V7. Uses V3, V4, V6, V8, V9.
#define EXPSPLIT \
	FCMGT4(2, 27, 1) \
	VORR V17.B16, V17.B16, V3.B16 \
	FMLA4(3, 1, 16) \
	FSUB4(4, 3, 17) \
	VSHL $23, V3.S4, V5.S4 \
	VADD V26.S4, V5.S4, V5.S4 \
	VORR V1.B16, V1.B16, V6.B16 \
	FMLS4(6, 4, 18) \
	FMLS4(6, 4, 19) \
	VORR V21.B16, V21.B16, V8.B16 \
	FMLA4(8, 20, 6) \
	VORR V22.B16, V22.B16, V7.B16 \
	FMLA4(7, 8, 6) \
	VORR V23.B16, V23.B16, V8.B16 \
	FMLA4(8, 7, 6) \
	VORR V24.B16, V24.B16, V7.B16 \
	FMLA4(7, 8, 6) \
	VORR V25.B16, V25.B16, V8.B16 \
	FMLA4(8, 7, 6) \
	FMUL4(9, 6, 6) \
	VORR V6.B16, V6.B16, V7.B16 \
	FMLA4(7, 8, 9)

// func eluSIMD(dst, src []float32)
TEXT ·eluSIMD(SB), NOSPLIT, $0-48
	MOVD dst_base+0(FP), R0
	MOVD dst_len+8(FP), R1
	MOVD src_base+24(FP), R2
	AND  $-8, R1
	CBZ  R1, done
	LSR  $2, R1
	LOADCONSTS

loop:
	VLD1.P 16(R2), [V0.S4]
	CMLT0(11, 0)                    // sign mask of x
	VAND V0.B16, V11.B16, V1.B16    // v = x where the sign is set, else +0
	EXPSPLIT
	FSUB4(10, 5, 26)                // s − 1
	FMLA4(10, 5, 7)                 // e^v − 1 = s·q + (s − 1)
	VBIT V2.B16, V28.B16, V10.B16   // −1 below the range
	VBIF V11.B16, V0.B16, V10.B16   // x where its sign is clear
	VST1.P [V10.S4], 16(R0)
	SUBS $1, R1
	BNE  loop

done:
	RET

// func sigmoidScaleSIMD(dst, src []float32, scale float32)
TEXT ·sigmoidScaleSIMD(SB), NOSPLIT, $0-52
	MOVD  dst_base+0(FP), R0
	MOVD  dst_len+8(FP), R1
	MOVD  src_base+24(FP), R2
	AND   $-8, R1
	CBZ   R1, done
	LSR   $2, R1
	LOADCONSTS
	MOVWU scale+48(FP), R9
	VDUP  R9, V29.S4
	DUPC(0x80000000, V30)
	VEOR  V31.B16, V31.B16, V31.B16

loop:
	VLD1.P 16(R2), [V0.S4]
	VORR V0.B16, V30.B16, V1.B16    // v = −|x|
	EXPSPLIT
	VORR V5.B16, V5.B16, V10.B16
	FMLA4(10, 5, 7)                 // e = s·q + s
	VBIT V2.B16, V31.B16, V10.B16   // 0 below the range
	FADD4(3, 10, 26)                // 1 + e
	FDIV4(4, 29, 3)                 // p = scale / (1 + e)
	FMUL4(6, 10, 4)                 // e·p
	CMLT0(11, 0)
	VBIT V11.B16, V6.B16, V4.B16    // x < 0 (sign set): e·p, else p
	VST1.P [V4.S4], 16(R0)
	SUBS $1, R1
	BNE  loop

done:
	RET

// func eluBackwardSIMD(dx, dy, y []float32)
TEXT ·eluBackwardSIMD(SB), NOSPLIT, $0-72
	MOVD dx_base+0(FP), R0
	MOVD dx_len+8(FP), R1
	MOVD dy_base+24(FP), R2
	MOVD y_base+48(FP), R3
	AND  $-8, R1
	CBZ  R1, done
	LSR  $2, R1
	DUPC(0x3f800000, V26)

loop:
	VLD1.P 16(R3), [V0.S4]
	VLD1.P 16(R2), [V4.S4]
	FADD4(1, 0, 26)                 // y + 1
	CMLT0(2, 0)
	VORR V26.B16, V26.B16, V3.B16
	VBIT V2.B16, V1.B16, V3.B16     // y + 1 where the sign of y is set, else 1
	FMUL4(5, 3, 4)
	VST1.P [V5.S4], 16(R0)
	SUBS $1, R1
	BNE  loop

done:
	RET
