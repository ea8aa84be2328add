package planar

import (
	"image"
	"image/color"
	"strings"
	"testing"
)

func TestCheckSize(t *testing.T) {
	for _, tc := range []struct {
		w, h int
		want string // "" for valid
	}{
		{1, 1, ""},
		{MaxSide, MaxPixels / MaxSide, ""},
		{0, 5, "each side"},
		{5, -1, "each side"},
		{MaxSide + 1, 1, "each side"},
		{MaxSide, MaxPixels/MaxSide + 1, "exceeds 33554432 pixels"},
	} {
		err := CheckSize(tc.w, tc.h)
		if tc.want == "" {
			if err != nil {
				t.Errorf("CheckSize(%d, %d) = %v", tc.w, tc.h, err)
			}
			continue
		}
		if err == nil || !strings.HasPrefix(err.Error(), "planar: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("CheckSize(%d, %d) = %v, want an error with %q", tc.w, tc.h, err, tc.want)
		}
	}
	// FromImage refuses an image beyond the limits before it allocates.
	if _, err := FromImage(boundsOnly{image.Rect(0, 0, MaxSide+1, 2)}); err == nil || !strings.Contains(err.Error(), "each side") {
		t.Errorf("FromImage of a %d-pixel-wide image: %v", MaxSide+1, err)
	}
}

// boundsOnly is an image of any bounds that stores no pixels.
type boundsOnly struct{ r image.Rectangle }

func (b boundsOnly) ColorModel() color.Model { return color.GrayModel }
func (b boundsOnly) Bounds() image.Rectangle { return b.r }
func (b boundsOnly) At(x, y int) color.Color { return color.Gray{} }
