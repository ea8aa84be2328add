package sgm

import (
	"context"
	"image"
	"strings"
	"testing"
)

// FuzzMatch feeds images of any size and content, and options from the
// fuzzer's numbers: no panic, and every error starts with "sgm: ".
//
//	go test ./sgm -run '^$' -fuzz FuzzMatch -fuzztime 30s
func FuzzMatch(f *testing.F) {
	f.Add(uint8(20), uint8(10), uint8(20), uint8(10), uint8(0), uint8(15), uint8(9), uint8(7), false, []byte("seed"))
	f.Add(uint8(1), uint8(1), uint8(1), uint8(1), uint8(0), uint8(0), uint8(3), uint8(1), true, []byte{0, 255})
	f.Add(uint8(40), uint8(3), uint8(40), uint8(3), uint8(39), uint8(60), uint8(1), uint8(3), true, []byte{7})
	f.Fuzz(func(t *testing.T, lw, lh, rw, rh, dmin, dmax, cw, ch uint8, fill bool, pix []byte) {
		o := &Options{MinDisparity: int(dmin), MaxDisparity: int(dmax), CensusWidth: int(cw % 12), CensusHeight: int(ch % 12), FillHoles: fill, Paths: 4 + 4*int(cw%2)}
		m, err := NewMatcher(o)
		if err != nil {
			if !strings.HasPrefix(err.Error(), "sgm: ") {
				t.Fatalf("NewMatcher: error %q", err)
			}
			return
		}
		img := func(w, h uint8, off int) *image.Gray {
			g := image.NewGray(image.Rect(0, 0, int(w), int(h)))
			for i := range g.Pix {
				if len(pix) > 0 {
					g.Pix[i] = pix[(i+off)%len(pix)] + uint8(i*off)
				}
			}
			return g
		}
		res, err := m.Match(context.Background(), img(lw, lh, 0), img(rw, rh, 3))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "sgm: ") {
				t.Fatalf("Match: error %q", err)
			}
			return
		}
		if err := res.Disparity.Check("disparity"); err != nil {
			t.Fatal(err)
		}
		lo, hi, err := m.Range(int(lw))
		if err != nil {
			t.Fatal(err)
		}
		for i, v := range res.Disparity.Pix {
			if res.Disparity.Mask[i] != 0 && (v < float32(lo)-0.5 || v > float32(hi)+0.5) {
				t.Fatalf("disparity %v outside [%d, %d]", v, lo, hi)
			}
		}
	})
}
