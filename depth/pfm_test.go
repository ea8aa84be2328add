package depth

import (
	"bytes"
	"encoding/binary"
	"math"
	"strings"
	"testing"
)

func TestPFMRoundTrip(t *testing.T) {
	for _, ch := range []int{1, 3} {
		w, h := 5, 3
		pix := make([]float32, w*h*ch)
		for i := range pix {
			pix[i] = float32(i)*0.37 - 2
		}
		pix[1] = float32(math.Inf(1))
		pix[2] = float32(math.NaN())
		pix[3] = math.SmallestNonzeroFloat32
		var buf bytes.Buffer
		if err := WritePFM(&buf, pix, w, h, ch); err != nil {
			t.Fatal(err)
		}
		got, gw, gh, gc, err := ReadPFM(&buf)
		if err != nil {
			t.Fatal(err)
		}
		if gw != w || gh != h || gc != ch {
			t.Fatalf("size %dx%dx%d, want %dx%dx%d", gw, gh, gc, w, h, ch)
		}
		for i := range pix {
			if math.Float32bits(got[i]) != math.Float32bits(pix[i]) {
				t.Errorf("channels %d: sample %d = %v, want %v (bit-exact)", ch, i, got[i], pix[i])
			}
		}
	}
}

// TestPFMLayout checks the byte layout against the PFM definition by hand:
// header lines, then rows from the bottom of the image up, little-endian for
// a negative scale.
func TestPFMLayout(t *testing.T) {
	pix := []float32{1, 2, 3, 4, 5, 6} // 3 wide, 2 tall: top row 1 2 3
	var buf bytes.Buffer
	if err := WritePFM(&buf, pix, 3, 2, 1); err != nil {
		t.Fatal(err)
	}
	b := buf.Bytes()
	header := "Pf\n3 2\n-1.0\n"
	if !strings.HasPrefix(string(b), header) {
		t.Fatalf("header %q, want %q", b[:len(header)], header)
	}
	data := b[len(header):]
	want := []float32{4, 5, 6, 1, 2, 3}
	for i, v := range want {
		if got := math.Float32frombits(binary.LittleEndian.Uint32(data[4*i:])); got != v {
			t.Errorf("stored sample %d = %v, want %v", i, got, v)
		}
	}
}

func TestPFMBigEndian(t *testing.T) {
	// A big-endian file written by hand (positive scale), 2 × 2, rows bottom
	// first.
	var buf bytes.Buffer
	buf.WriteString("Pf\n2 2\n1.0\n")
	for _, v := range []float32{3, 4, 1, 2} {
		binary.Write(&buf, binary.BigEndian, v)
	}
	pix, w, h, c, err := ReadPFM(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if w != 2 || h != 2 || c != 1 {
		t.Fatalf("size %dx%dx%d", w, h, c)
	}
	for i, v := range []float32{1, 2, 3, 4} {
		if pix[i] != v {
			t.Errorf("pix[%d] = %v, want %v", i, pix[i], v)
		}
	}
}

func TestReadPFMErrors(t *testing.T) {
	cases := []struct{ name, data, want string }{
		{"empty", "", "header"},
		{"bad magic", "P6\n2 2\n-1\n", "magic"},
		{"zero width", "Pf\n0 2\n-1\n", "width"},
		{"huge", "Pf\n30000 30000\n-1\n", "exceeds"},
		{"huge side", "Pf\n99999999 1\n-1\n", "width"},
		{"zero scale", "Pf\n1 1\n0\n\x00\x00\x00\x00", "scale"},
		{"NaN scale", "Pf\n1 1\nNaN\n\x00\x00\x00\x00", "scale"},
		{"truncated", "Pf\n2 2\n-1\n\x00\x00\x00\x00", "truncated"},
		{"long token", "Pf\n" + strings.Repeat("1", 100), "longer"},
	}
	for _, c := range cases {
		_, _, _, _, err := ReadPFM(strings.NewReader(c.data))
		if err == nil || !strings.HasPrefix(err.Error(), "depth: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want a depth: error mentioning %q", c.name, err, c.want)
		}
	}
	if err := WritePFM(&bytes.Buffer{}, make([]float32, 3), 2, 2, 1); err == nil {
		t.Error("WritePFM with a short slice: no error")
	}
	if err := WritePFM(&bytes.Buffer{}, make([]float32, 8), 2, 2, 2); err == nil {
		t.Error("WritePFM with 2 channels: no error")
	}
}
