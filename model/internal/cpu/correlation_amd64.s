//go:build !purego

#include "textflag.h"

// func corrForwardAVX2(o []float32, ostride int, l []float32, lstride int, r []float32, rstride, c, nx, kc int, scale float32)
//
// For x = 0, 8, … < nx and j < kc: o[j·ostride + x …+8] =
// scale · Σ_ch l[ch·lstride + x …] · r[ch·rstride + x − j …], with 8
// shifts in 8 accumulators (Y0–Y7) whatever kc is; only kc rows are
// stored. r may be read up to 7 values before its start.
TEXT ·corrForwardAVX2(SB), NOSPLIT, $0-124
	MOVQ o_base+0(FP), DI
	MOVQ ostride+24(FP), R12
	SHLQ $2, R12
	MOVQ l_base+32(FP), SI
	MOVQ lstride+56(FP), R11
	SHLQ $2, R11
	MOVQ r_base+64(FP), DX
	MOVQ rstride+88(FP), R8
	SHLQ $2, R8
	MOVQ c+96(FP), R9
	MOVQ nx+104(FP), R10
	SHLQ $2, R10
	VBROADCASTSS scale+120(FP), Y15
	XORQ BX, BX                 // x, in bytes
	TESTQ R10, R10
	JZ   fwdDone

fwdBlock:
	LEAQ (SI)(BX*1), AX         // l[ch][x]
	LEAQ (DX)(BX*1), CX         // r[ch][x]
	MOVQ R9, R13
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3
	VXORPS Y4, Y4, Y4
	VXORPS Y5, Y5, Y5
	VXORPS Y6, Y6, Y6
	VXORPS Y7, Y7, Y7

fwdChan:
	VMOVUPS (AX), Y8
	VFMADD231PS (CX), Y8, Y0
	VFMADD231PS -4(CX), Y8, Y1
	VFMADD231PS -8(CX), Y8, Y2
	VFMADD231PS -12(CX), Y8, Y3
	VFMADD231PS -16(CX), Y8, Y4
	VFMADD231PS -20(CX), Y8, Y5
	VFMADD231PS -24(CX), Y8, Y6
	VFMADD231PS -28(CX), Y8, Y7
	ADDQ R11, AX
	ADDQ R8, CX
	DECQ R13
	JNZ  fwdChan

	LEAQ (DI)(BX*1), AX         // o[0][x]
	VMULPS Y15, Y0, Y0
	VMOVUPS Y0, (AX)
	CMPQ kc+112(FP), $2
	JLT  fwdNext
	ADDQ R12, AX
	VMULPS Y15, Y1, Y1
	VMOVUPS Y1, (AX)
	CMPQ kc+112(FP), $3
	JLT  fwdNext
	ADDQ R12, AX
	VMULPS Y15, Y2, Y2
	VMOVUPS Y2, (AX)
	CMPQ kc+112(FP), $4
	JLT  fwdNext
	ADDQ R12, AX
	VMULPS Y15, Y3, Y3
	VMOVUPS Y3, (AX)
	CMPQ kc+112(FP), $5
	JLT  fwdNext
	ADDQ R12, AX
	VMULPS Y15, Y4, Y4
	VMOVUPS Y4, (AX)
	CMPQ kc+112(FP), $6
	JLT  fwdNext
	ADDQ R12, AX
	VMULPS Y15, Y5, Y5
	VMOVUPS Y5, (AX)
	CMPQ kc+112(FP), $7
	JLT  fwdNext
	ADDQ R12, AX
	VMULPS Y15, Y6, Y6
	VMOVUPS Y6, (AX)
	CMPQ kc+112(FP), $8
	JLT  fwdNext
	ADDQ R12, AX
	VMULPS Y15, Y7, Y7
	VMOVUPS Y7, (AX)

fwdNext:
	ADDQ $32, BX
	CMPQ BX, R10
	JLT  fwdBlock
	VZEROUPPER

fwdDone:
	RET

// func corrBackwardAVX2(out []float32, ostride int, g []float32, gstep int, v []float32, vstep, vstride, kn, nx int, scale float32)
//
// For x = 0, 8, … < nx and the 8 rows j: out[j·ostride + x …+8] =
// scale · Σ_{k<kn} g[k·gstep + x …] · v[j·vstride + k·vstep + x …].
// vstep may be negative.
TEXT ·corrBackwardAVX2(SB), NOSPLIT, $0-124
	MOVQ out_base+0(FP), DI
	MOVQ g_base+32(FP), SI
	MOVQ gstep+56(FP), R8
	SHLQ $2, R8
	MOVQ v_base+64(FP), DX
	MOVQ vstep+88(FP), R9
	SHLQ $2, R9
	MOVQ vstride+96(FP), R10
	SHLQ $2, R10
	VBROADCASTSS scale+120(FP), Y15
	XORQ BX, BX                 // x
	MOVQ nx+112(FP), AX
	TESTQ AX, AX
	JZ   bwdDone
	MOVQ kn+104(FP), AX
	TESTQ AX, AX
	JZ   bwdDone

bwdBlock:
	LEAQ (SI)(BX*4), AX         // g[k][x]
	LEAQ (DX)(BX*4), CX         // rows 0, 1, 2 of v
	LEAQ (CX)(R10*2), R12
	ADDQ R10, R12               // rows 3, 4, 5
	LEAQ (R12)(R10*2), R13
	ADDQ R10, R13               // rows 6, 7
	MOVQ kn+104(FP), R11
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3
	VXORPS Y4, Y4, Y4
	VXORPS Y5, Y5, Y5
	VXORPS Y6, Y6, Y6
	VXORPS Y7, Y7, Y7

bwdShift:
	VMOVUPS (AX), Y8
	VFMADD231PS (CX), Y8, Y0
	VFMADD231PS (CX)(R10*1), Y8, Y1
	VFMADD231PS (CX)(R10*2), Y8, Y2
	VFMADD231PS (R12), Y8, Y3
	VFMADD231PS (R12)(R10*1), Y8, Y4
	VFMADD231PS (R12)(R10*2), Y8, Y5
	VFMADD231PS (R13), Y8, Y6
	VFMADD231PS (R13)(R10*1), Y8, Y7
	ADDQ R8, AX
	ADDQ R9, CX
	ADDQ R9, R12
	ADDQ R9, R13
	DECQ R11
	JNZ  bwdShift

	LEAQ (DI)(BX*4), AX         // out[0][x]
	MOVQ ostride+24(FP), CX
	SHLQ $2, CX
	VMULPS Y15, Y0, Y0
	VMOVUPS Y0, (AX)
	ADDQ CX, AX
	VMULPS Y15, Y1, Y1
	VMOVUPS Y1, (AX)
	ADDQ CX, AX
	VMULPS Y15, Y2, Y2
	VMOVUPS Y2, (AX)
	ADDQ CX, AX
	VMULPS Y15, Y3, Y3
	VMOVUPS Y3, (AX)
	ADDQ CX, AX
	VMULPS Y15, Y4, Y4
	VMOVUPS Y4, (AX)
	ADDQ CX, AX
	VMULPS Y15, Y5, Y5
	VMOVUPS Y5, (AX)
	ADDQ CX, AX
	VMULPS Y15, Y6, Y6
	VMOVUPS Y6, (AX)
	ADDQ CX, AX
	VMULPS Y15, Y7, Y7
	VMOVUPS Y7, (AX)

	ADDQ $8, BX
	CMPQ BX, nx+112(FP)
	JLT  bwdBlock
	VZEROUPPER

bwdDone:
	RET
