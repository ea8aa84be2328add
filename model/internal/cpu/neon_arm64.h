// Encodings of the ASIMD floating-point instructions that the Go arm64
// assembler does not know (it has VFMLA, loads, stores, integer and bitwise
// vector instructions, but no vector FADD, FMUL, FDIV or compares). Each
// macro takes register numbers (0 … 31) and emits the instruction word from
// the Arm Architecture Reference Manual (ARM DDI 0487, section C7.2); go
// tool objdump decodes them back, which is how they were checked. Operands
// follow Arm order: destination first.

// FMLAE: Vd.4S += Vn.4S · Vm.S[idx] (FMLA by element, single precision).
#define FMLAE(d, n, m, idx) WORD $(0x4F801000 | ((idx)&1)<<21 | ((idx)>>1)<<11 | (m)<<16 | (n)<<5 | (d))
// FMLA4: Vd.4S += Vn.4S · Vm.4S.
#define FMLA4(d, n, m) WORD $(0x4E20CC00 | (m)<<16 | (n)<<5 | (d))
// FMLS4: Vd.4S −= Vn.4S · Vm.4S.
#define FMLS4(d, n, m) WORD $(0x4EA0CC00 | (m)<<16 | (n)<<5 | (d))
// FADD4, FSUB4, FMUL4, FDIV4: Vd.4S = Vn.4S op Vm.4S.
#define FADD4(d, n, m) WORD $(0x4E20D400 | (m)<<16 | (n)<<5 | (d))
#define FSUB4(d, n, m) WORD $(0x4EA0D400 | (m)<<16 | (n)<<5 | (d))
#define FMUL4(d, n, m) WORD $(0x6E20DC00 | (m)<<16 | (n)<<5 | (d))
#define FDIV4(d, n, m) WORD $(0x6E20FC00 | (m)<<16 | (n)<<5 | (d))
// FADD2: Vd.2S = Vn.2S + Vm.2S (the low half).
#define FADD2(d, n, m) WORD $(0x0E20D400 | (m)<<16 | (n)<<5 | (d))
// FADDP4: pairwise add, Vd.4S = (n0+n1, n2+n3, m0+m1, m2+m3).
#define FADDP4(d, n, m) WORD $(0x6E20D400 | (m)<<16 | (n)<<5 | (d))
// CMLT0: Vd.4S = all ones where the signed integer Vn.4S < 0, that is
// where the float's sign bit is set.
#define CMLT0(d, n) WORD $(0x4EA0A800 | (n)<<5 | (d))
// FCMGT4: Vd.4S = all ones where Vn.4S > Vm.4S, else 0 (false for NaN).
#define FCMGT4(d, n, m) WORD $(0x6EA0E400 | (m)<<16 | (n)<<5 | (d))
