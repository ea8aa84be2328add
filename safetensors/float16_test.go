package safetensors

import (
	"encoding/binary"
	"math"
	"os"
	"path/filepath"
	"testing"
)

func TestFloat16KnownBits(t *testing.T) {
	// Bit patterns from the IEEE 754-2008 binary16 format (1 sign, 5
	// exponent bits with bias 15, 10 fraction bits); values from memory,
	// each checked by hand against that layout.
	for _, tc := range []struct {
		f float32
		h uint16
	}{
		{1, 0x3C00},
		{-2, 0xC000},
		{0.5, 0x3800},
		{65504, 0x7BFF},                       // largest finite
		{float32(math.Ldexp(1, -14)), 0x0400}, // smallest normal
		{float32(math.Ldexp(1, -24)), 0x0001}, // smallest subnormal
		{float32(math.Ldexp(1023, -24)), 0x03FF},
		{0, 0x0000},
		{float32(math.Copysign(0, -1)), 0x8000},
		{float32(math.Inf(1)), 0x7C00},
		{float32(math.Inf(-1)), 0xFC00},
	} {
		if got := Float16Bits(tc.f); got != tc.h {
			t.Errorf("Float16Bits(%v) = %#04x, want %#04x", tc.f, got, tc.h)
		}
		if got := Float16From(tc.h); got != tc.f {
			t.Errorf("Float16From(%#04x) = %v, want %v", tc.h, got, tc.f)
		}
	}
	// 1/3 is not a half: it rounds to 0x3555 = 1365/4096 (1.0101010101b × 2^−2).
	if got := Float16Bits(1.0 / 3); got != 0x3555 || Float16From(got) != 1365.0/4096 {
		t.Errorf("Float16Bits(1/3) = %#04x (%v), want 0x3555 (%v)", got, Float16From(got), 1365.0/4096)
	}
	// Rounding: ties go to the even fraction (IEEE 754 roundTiesToEven).
	for _, tc := range []struct {
		f float64
		h uint16
	}{
		{1 + math.Ldexp(1, -11), 0x3C00},   // halfway 1 … 1+2^-10: even is 1
		{1 + 3*math.Ldexp(1, -11), 0x3C02}, // halfway 1+2^-10 … 1+2^-9: even is 0x3C02
		{1 + math.Ldexp(1, -11) + math.Ldexp(1, -20), 0x3C01},
		{65519, 0x7BFF},                     // below the tie with 2^16
		{65520, 0x7C00},                     // the tie rounds to even: Inf
		{math.Ldexp(1, -25), 0x0000},        // half the smallest subnormal: even is 0
		{math.Ldexp(3, -25), 0x0002},        // 1.5 × smallest subnormal: even is 2
		{math.Ldexp(1, -25) * 1.01, 0x0001}, // just above the tie
		{math.Ldexp(2047, -25), 0x0400},     // rounds up into the smallest normal
	} {
		if got := Float16Bits(float32(tc.f)); got != tc.h {
			t.Errorf("Float16Bits(%v) = %#04x, want %#04x", tc.f, got, tc.h)
		}
	}
	if h := Float16Bits(float32(math.NaN())); h&0x7C00 != 0x7C00 || h&0x3FF == 0 {
		t.Errorf("Float16Bits(NaN) = %#04x, not a NaN", h)
	}
	// NaN payloads (IEEE 754-2008 layout, by hand): the top 10 of the 23
	// fraction bits are kept and the quiet bit 0x0200 is set, so a
	// signalling NaN whose payload lies in the low bits stays a NaN.
	for _, tc := range []struct {
		f uint32
		h uint16
	}{
		{0x7FC02000, 0x7E01}, // quiet, payload bit 13 → half bit 0
		{0xFFC00000, 0xFE00}, // negative quiet NaN
		{0x7F800001, 0x7E00}, // signalling, payload only below bit 13
		{0x7FA00000, 0x7F00}, // signalling, payload bit 21 → half bit 8
	} {
		if got := Float16Bits(math.Float32frombits(tc.f)); got != tc.h {
			t.Errorf("Float16Bits(NaN %#08x) = %#04x, want %#04x", tc.f, got, tc.h)
		}
	}
	if !math.IsNaN(float64(Float16From(0x7E00))) {
		t.Error("Float16From(0x7E00) is not NaN")
	}
}

func TestFloat16RoundTripAllHalves(t *testing.T) {
	// Every binary16 value is exact in float32, so widening then narrowing
	// must give back the same bits (NaNs excepted: only NaN-ness is kept).
	for h := 0; h < 1<<16; h++ {
		f := Float16From(uint16(h))
		if h&0x7C00 == 0x7C00 && h&0x3FF != 0 {
			if !math.IsNaN(float64(f)) {
				t.Fatalf("%#04x widens to %v, want NaN", h, f)
			}
			continue
		}
		if got := Float16Bits(f); got != uint16(h) {
			t.Fatalf("%#04x → %v → %#04x", h, f, got)
		}
	}
}

func TestFloat16AgainstNumPy(t *testing.T) {
	// Cases and expected bits from NumPy 1.24.2 (Debian python3-numpy)
	// astype(float16), written by testdata/model/gen_st.py: every tie
	// between consecutive positive halves, neighbours of ties, random
	// values from 2^-27 to 2^17 of both signs, overflow and underflow.
	b, err := os.ReadFile(filepath.Join("..", "testdata", "model", "f16_cases.bin"))
	if err != nil {
		t.Fatal(err)
	}
	if len(b)%6 != 0 || len(b) < 6*30000 {
		t.Fatalf("f16_cases.bin has %d bytes", len(b))
	}
	bad := 0
	for i := 0; i < len(b); i += 6 {
		f := math.Float32frombits(binary.LittleEndian.Uint32(b[i:]))
		want := binary.LittleEndian.Uint16(b[i+4:])
		if got := Float16Bits(f); got != want {
			if bad++; bad < 10 {
				t.Errorf("Float16Bits(%g = %#08x) = %#04x, NumPy gives %#04x", f, math.Float32bits(f), got, want)
			}
		}
	}
	if bad > 0 {
		t.Errorf("%d of %d cases differ from NumPy", bad, len(b)/6)
	}
}
