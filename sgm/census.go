package sgm

import (
	"image"
	"image/color"
	"math/bits"
)

// greyRow writes row y (counted from the top of its bounds) of img's luma
// into dst, with the weights of color.GrayModel (ITU-R BT.601: 0.299,
// 0.587, 0.114 on 16-bit values, rounded). *image.Gray, *image.RGBA,
// *image.NRGBA and *image.YCbCr (its Y plane) are read directly; other types
// go through color.GrayModel.
func greyRow(dst []uint8, img image.Image, y int) {
	b := img.Bounds()
	w := b.Dx()
	dst = dst[:w]
	switch m := img.(type) {
	case *image.Gray:
		i := m.PixOffset(b.Min.X, b.Min.Y+y)
		copy(dst, m.Pix[i:i+w])
	case *image.YCbCr:
		i := m.YOffset(b.Min.X, b.Min.Y+y)
		copy(dst, m.Y[i:i+w])
	case *image.RGBA:
		i := m.PixOffset(b.Min.X, b.Min.Y+y)
		row := m.Pix[i : i+4*w]
		for x := range dst {
			p := row[4*x : 4*x+3 : 4*x+3]
			dst[x] = luma8(uint32(p[0])*0x101, uint32(p[1])*0x101, uint32(p[2])*0x101)
		}
	case *image.NRGBA:
		i := m.PixOffset(b.Min.X, b.Min.Y+y)
		row := m.Pix[i : i+4*w]
		for x := range dst {
			p := row[4*x : 4*x+4 : 4*x+4]
			r, g, bl, a := uint32(p[0])*0x101, uint32(p[1])*0x101, uint32(p[2])*0x101, uint32(p[3])*0x101
			if a != 0xffff { // as color.NRGBA.RGBA premultiplies
				r, g, bl = r*a/0xffff, g*a/0xffff, bl*a/0xffff
			}
			dst[x] = luma8(r, g, bl)
		}
	default:
		for x := range dst {
			dst[x] = color.GrayModel.Convert(img.At(b.Min.X+x, b.Min.Y+y)).(color.Gray).Y
		}
	}
}

// luma8 is color.GrayModel's conversion of 16-bit premultiplied R, G, B.
func luma8(r, g, b uint32) uint8 {
	return uint8((19595*r + 38470*g + 7471*b + 1<<15) >> 24)
}

// censusRow writes row y of the census transform of a w-wide grey image,
// read from pad (the image with a border of half the window on each side,
// see padImage), into dst. The window's neighbours, in row-major order
// without the centre, go in groups of 8 to the bytes of the word, from the
// lowest byte: within a byte the first neighbour of the group takes the
// highest bit used. A bit is 1 when that neighbour is darker than the
// centre. (The Hamming distance does not depend on the order of the bits;
// this one lets 32 pixels' bits be set at once.) acc is scratch of 8·w
// bytes.
func censusRow(dst []uint64, pad []uint8, w, cw, ch, y int, acc []uint8) {
	rx, ry := cw/2, ch/2
	pw := w + 2*rx
	out := dst[:w]
	centre := pad[(y+ry)*pw+rx : (y+ry)*pw+rx+w]
	acc = acc[:8*w]
	clear(acc)
	k := 0
	for dy := range ch {
		nrow := pad[(y+dy)*pw : (y+dy)*pw+pw]
		for dx := range cw {
			if dy == ry && dx == rx {
				continue
			}
			darker(acc[(k/8)*w:(k/8+1)*w], nrow[dx:dx+w], centre)
			k++
		}
	}
	groups := (k + 7) / 8
	if groups == 8 { // the default window (62 bits) and others of 57 to 64
		a0, a1, a2, a3 := acc[:w], acc[w:2*w], acc[2*w:3*w], acc[3*w:4*w]
		a4, a5, a6, a7 := acc[4*w:5*w], acc[5*w:6*w], acc[6*w:7*w], acc[7*w:8*w]
		for x := range out {
			out[x] = uint64(a0[x]) | uint64(a1[x])<<8 | uint64(a2[x])<<16 | uint64(a3[x])<<24 |
				uint64(a4[x])<<32 | uint64(a5[x])<<40 | uint64(a6[x])<<48 | uint64(a7[x])<<56
		}
		return
	}
	for x, v := range acc[:w] {
		out[x] = uint64(v)
	}
	for g := 1; g < groups; g++ {
		sh := uint(8 * g)
		for x, v := range acc[g*w : (g+1)*w] {
			out[x] |= uint64(v) << sh
		}
	}
}

// darkerGeneric shifts each acc[x] left by one bit and sets the new bit
// when n[x] < c[x].
func darkerGeneric(acc, n, c []uint8) {
	n = n[:len(acc)]
	c = c[:len(acc)]
	for x, v := range c {
		var bit uint8
		if n[x] < v {
			bit = 1
		}
		acc[x] = acc[x]<<1 | bit
	}
}

// costRowGeneric writes the matching costs of one row: for left pixel x and
// level d, the Hamming distance between the census words cl[x] and
// cr[x−lo−d] at cost[x·np+d], or costMax where x−lo−d < 0 and at the
// levels n … np−1.
func costRowGeneric(cost []uint8, cl, cr []uint64, w, lo, n, np int, costMax uint8) {
	for x := range w {
		c := cost[x*np : (x+1)*np]
		k := max(min(n, x-lo+1), 0)
		l := cl[x]
		for d := range k {
			c[d] = uint8(bits.OnesCount64(l ^ cr[x-lo-d]))
		}
		for d := k; d < np; d++ {
			c[d] = costMax
		}
	}
}
