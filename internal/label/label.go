// Package label draws the project's text into images: the labels of the
// colour maps' scale bars (package depth) and of the charts (internal/
// chart). There is one face, the 7×13 bitmap face of golang.org/x/image/
// font/basicfont (public-domain X11 misc-fixed), so there is no font file
// to ship and every picture uses the same letters.
package label

import (
	"image"
	"image/color"
	"image/draw"

	"golang.org/x/image/font"
	"golang.org/x/image/font/basicfont"
	"golang.org/x/image/math/fixed"
)

// Face is the face of every label.
var Face = basicfont.Face7x13

// Height is the height of a line of text in pixels (ascent plus descent).
const Height = 13

// Align places a label relative to its anchor column.
type Align int

const (
	Left   Align = iota // the label starts at the anchor
	Center              // the label is centred on the anchor
	Right               // the label ends at the anchor
)

// Width returns the width of s in pixels.
func Width(s string) int { return font.MeasureString(Face, s).Ceil() }

// Draw draws s in colour c into dst with its baseline at row baseline,
// placed against column x by align.
func Draw(dst draw.Image, s string, x, baseline int, align Align, c color.Color) {
	switch align {
	case Center:
		x -= Width(s) / 2
	case Right:
		x -= Width(s)
	}
	d := &font.Drawer{Dst: dst, Src: image.NewUniform(c), Face: Face, Dot: fixed.P(x, baseline)}
	d.DrawString(s)
}

// DrawUp draws s in colour c into dst rotated a quarter turn
// anticlockwise (reading upwards, as a chart's vertical axis title),
// centred on row cy, its letters' tops at column left.
func DrawUp(dst draw.Image, s string, left, cy int, c color.Color) {
	w := Width(s)
	tmp := image.NewAlpha(image.Rect(0, 0, w, Height))
	d := &font.Drawer{Dst: tmp, Src: image.Opaque, Face: Face, Dot: fixed.P(0, Face.Ascent)}
	d.DrawString(s)
	r, g, b, a := c.RGBA()
	for y := range Height {
		for x := range w {
			cov := uint32(tmp.AlphaAt(x, y).A)
			if cov == 0 {
				continue
			}
			// (x, y) of the upright text goes to (left+y, cy+w/2-1-x).
			col := color.NRGBA64{uint16(r * 0xffff / max(a, 1)), uint16(g * 0xffff / max(a, 1)), uint16(b * 0xffff / max(a, 1)), uint16(a * cov / 0xff)}
			blend(dst, left+y, cy+w/2-1-x, col)
		}
	}
}

// blend draws col over the pixel at (x, y).
func blend(dst draw.Image, x, y int, col color.Color) {
	if !(image.Point{x, y}).In(dst.Bounds()) {
		return
	}
	draw.Draw(dst, image.Rect(x, y, x+1, y+1), image.NewUniform(col), image.Point{}, draw.Over)
}
