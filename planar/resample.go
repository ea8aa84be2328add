package planar

import (
	"fmt"
	"image"
	"image/color"
	"math"
)

// Resampler scales images of any size to one size, into 1×3×H×W planes,
// with the Catmull-Rom filter. Its result is, bit for bit, that of
//
//	dst64 := image.NewRGBA64(image.Rect(0, 0, width, height))
//	draw.CatmullRom.Scale(dst64, dst64.Rect, img, img.Bounds(), draw.Src, nil)
//	FromImageInto(dst, dst64)
//
// with golang.org/x/image/draw (for an image of the target size itself,
// image/draw.Draw in place of the scaling, which that scaling equals), but
// without the intermediate image, per-call filter tables and [4]float64
// buffer, or an interface call per pixel: BenchmarkResampler640x480To512x384
// took 5.9–6.1 ms against 13.8–17.7 ms for BenchmarkXDraw640x480To512x384
// (idle 2-core AMD EPYC VM, 2026-12-02). The filter tables are kept for the
// last source size; the vertical pass keeps only the rows it
// needs. A Resampler is not safe for concurrent use.
type Resampler struct {
	w, h     int // the target size
	sw, sh   int // the source size the filters are for
	hor, ver filter
	row      []uint32  // one source row: premultiplied 16-bit R, G, B, A a pixel
	rowf     []float64 // the same as float64
	ring     []float64 // horizontally filtered source rows, 4 values a pixel, span of them
	acc      []float64 // one destination row's sums, 4 values a pixel
	span     int       // rows the ring holds
	ringRow  []int     // the source row in each ring slot, −1 if none
}

// NewResampler returns a Resampler to width × height, or an error if the
// size is outside CheckSize's bounds.
func NewResampler(width, height int) (*Resampler, error) {
	if err := CheckSize(width, height); err != nil {
		return nil, fmt.Errorf("planar: resampler: %w", err)
	}
	return &Resampler{w: width, h: height}, nil
}

// filter holds, for each destination column (or row), the source columns
// that contribute and their weights, as golang.org/x/image/draw's distrib.
type filter struct {
	first, last []int32 // contribution index range per destination index
	coord       []int32
	weight      []float64
	inv, inv16  []float64 // 1 / total weight, and that / 0xffff
}

// catmullRom is golang.org/x/image/draw's CatmullRom kernel, support 2, its
// arithmetic written the same way (and not fused into FMA) so the weights
// are the same bits on every architecture.
func catmullRom(t float64) float64 {
	if t < 1 {
		return float64((float64(1.5*t)-2.5)*t*t) + 1
	}
	return float64((float64(float64(float64(-0.5*t)+2.5)*t)-4)*t) + 2
}

// newFilter builds the filter from sw source to dw destination samples,
// as golang.org/x/image/draw's newDistrib: destination sample x sits at
// source position (x + ½)·sw/dw − ½, and when shrinking the kernel is
// widened by sw/dw so that every source sample counts.
func newFilter(dw, sw int) filter {
	const support = 2
	scale := float64(sw) / float64(dw)
	half, argScale := float64(support), 1.0
	if scale > 1 {
		half *= scale
		argScale = 1 / scale
	}
	f := filter{first: make([]int32, dw), last: make([]int32, dw), inv: make([]float64, dw), inv16: make([]float64, dw)}
	for x := range dw {
		center := float64((float64(x)+0.5)*scale) - 0.5
		i := max(int32(math.Floor(center-half)), 0)
		j := int32(math.Ceil(center + half))
		if j > int32(sw) {
			j = max(int32(sw), i)
		}
		total := 0.0
		f.first[x] = int32(len(f.coord))
		for c := i; c < j; c++ {
			t := (center - float64(c)) * argScale
			if t < 0 {
				t = -t
			}
			if t >= support {
				continue
			}
			wt := catmullRom(t)
			if wt == 0 {
				continue
			}
			total += wt
			f.coord = append(f.coord, c)
			f.weight = append(f.weight, wt)
		}
		f.last[x] = int32(len(f.coord))
		f.inv[x] = 1 / total
		f.inv16[x] = f.inv[x] / 0xffff
	}
	return f
}

// Scale writes img, resampled to the Resampler's size, into dst (shape
// 1×3×H×W of that size): R, G and B in [0, 1], premultiplied colours
// divided by alpha as FromImageInto does. It returns an error if img is nil,
// empty or larger than MaxSide or MaxPixels, or dst has another shape.
func (r *Resampler) Scale(dst *Image, img image.Image) error {
	b, err := imageBounds(img)
	if err != nil {
		return err
	}
	sw, sh := b.Dx(), b.Dy()
	if err := CheckSize(sw, sh); err != nil {
		return fmt.Errorf("planar: image: %w", err)
	}
	if err := dst.Check("destination"); err != nil {
		return fmt.Errorf("planar: %w", err)
	}
	if dst.N != 1 || dst.C != 3 || dst.H != r.h || dst.W != r.w {
		return fmt.Errorf("planar: destination has shape %s, the resampler gives 1x3x%dx%d", dst.Shape(), r.h, r.w)
	}
	if sw == r.w && sh == r.h {
		r.copyImage(dst, img)
		return nil
	}
	if sw != r.sw || sh != r.sh {
		r.prepare(sw, sh)
	}
	for i := range r.ringRow {
		r.ringRow[i] = -1
	}
	n := r.w * r.h
	pr, pg, pb := dst.Pix[:n], dst.Pix[n:2*n], dst.Pix[2*n:3*n]
	v := &r.ver
	acc := r.acc
	for y := range r.h {
		lo, hi := v.first[y], v.last[y]
		clear(acc)
		for k := lo; k < hi; k++ {
			// Tap by tap over the whole row: each pixel's sum still adds
			// its taps in x/image/draw's order.
			src := r.filterRow(img, int(v.coord[k]))
			wt := v.weight[k]
			for i, p := range src {
				acc[i] += float64(p * wt)
			}
		}
		inv := v.inv[y]
		o := y * r.w
		for x := range r.w {
			p := acc[4*x : 4*x+4 : 4*x+4]
			sa := p[3]
			sr, sg, sb := min(p[0], sa), min(p[1], sa), min(p[2], sa)
			pr[o+x], pg[o+x], pb[o+x] = unpremultiply(to16(sr*inv), to16(sg*inv), to16(sb*inv), to16(sa*inv))
		}
	}
	return nil
}

// prepare builds the filters and buffers for sources of sw × sh.
func (r *Resampler) prepare(sw, sh int) {
	r.sw, r.sh = sw, sh
	r.hor, r.ver = newFilter(r.w, sw), newFilter(r.h, sh)
	// The ring holds every source row one destination row reads: their
	// coordinates are consecutive, and the windows move forward only.
	r.span = 1
	for y := range r.h {
		if lo, hi := r.ver.first[y], r.ver.last[y]; hi > lo {
			r.span = max(r.span, int(r.ver.coord[hi-1]-r.ver.coord[lo])+1)
		}
	}
	r.row, r.rowf = make([]uint32, 4*sw), make([]float64, 4*sw)
	r.acc = make([]float64, 4*r.w)
	r.ring = make([]float64, 4*r.span*r.w)
	r.ringRow = make([]int, r.span)
}

// filterRow returns the ring slot of source row y (relative to the image's
// bounds), filling it with the row filtered horizontally unless it holds it
// already.
func (r *Resampler) filterRow(img image.Image, y int) []float64 {
	slot := y % r.span
	out := r.ring[slot*r.w*4 : (slot+1)*r.w*4]
	if r.ringRow[slot] == y {
		return out
	}
	r.ringRow[slot] = y
	opaque := loadRow(r.row, img, y)
	row := r.rowf
	for i, v := range r.row {
		row[i] = float64(v)
	}
	h := &r.hor
	for x := range r.w {
		var sr, sg, sb, sa float64
		for k := h.first[x]; k < h.last[x]; k++ {
			p := row[4*h.coord[k]:][:4]
			wt := h.weight[k]
			sr += float64(p[0] * wt)
			sg += float64(p[1] * wt)
			sb += float64(p[2] * wt)
			sa += float64(p[3] * wt)
		}
		inv := h.inv16[x]
		q := out[4*x : 4*x+4 : 4*x+4]
		q[0], q[1], q[2], q[3] = sr*inv, sg*inv, sb*inv, sa*inv
		if opaque {
			q[3] = 1 // as x/image/draw stores it for these types
		}
	}
	return out
}

// to16 is golang.org/x/image/draw's ftou: [0, 1] to [0, 0xffff], rounded.
func to16(f float64) uint32 {
	i := int32(float64(0xffff*f) + 0.5)
	return uint32(min(max(i, 0), 0xffff))
}

// unpremultiply turns premultiplied 16-bit colours into R, G, B in [0, 1]
// (FromImageInto's rule for an *image.RGBA64, and Resampler's). It
// divides, correctly rounded, rather than multiplying by 1/a, so an opaque
// 16-bit value v maps to exactly v/65535; a fully transparent pixel gives 0.
func unpremultiply(r, g, b, a uint32) (float32, float32, float32) {
	if a == 0 {
		return 0, 0, 0
	}
	fa := float32(a)
	return min(float32(r)/fa, 1), min(float32(g)/fa, 1), min(float32(b)/fa, 1)
}

// copyImage converts img, of the Resampler's size, as image/draw.Draw into
// an *image.RGBA64 followed by FromImageInto would.
func (r *Resampler) copyImage(dst *Image, img image.Image) {
	if len(r.row) < 4*r.w {
		r.row = make([]uint32, 4*r.w)
	}
	n := r.w * r.h
	pr, pg, pb := dst.Pix[:n], dst.Pix[n:2*n], dst.Pix[2*n:3*n]
	for y := range r.h {
		loadRow(r.row, img, y)
		for x := range r.w {
			p := r.row[4*x:][:4]
			i := y*r.w + x
			pr[i], pg[i], pb[i] = unpremultiply(p[0], p[1], p[2], p[3])
		}
	}
}

// loadRow writes row y (relative to img's bounds) of img as premultiplied
// 16-bit R, G, B, A: the values of img.At(x, y).RGBA(), read directly for
// the common image types. It reports whether the type is one that
// golang.org/x/image/draw's scaling takes as opaque (alpha exactly 1 after
// the horizontal pass rather than the filtered alpha): *image.Gray, and
// *image.YCbCr of the subsample ratios it reads directly.
func loadRow(dst []uint32, img image.Image, y int) (opaque bool) {
	b := img.Bounds()
	w := b.Dx()
	switch src := img.(type) {
	case *image.RGBA:
		row := src.Pix[(y+b.Min.Y-src.Rect.Min.Y)*src.Stride+(b.Min.X-src.Rect.Min.X)*4:][:4*w]
		for i, v := range row {
			dst[i] = uint32(v) * 0x101
		}
	case *image.NRGBA:
		row := src.Pix[(y+b.Min.Y-src.Rect.Min.Y)*src.Stride+(b.Min.X-src.Rect.Min.X)*4:][:4*w]
		for x := range w {
			p := row[4*x:][:4]
			a := uint32(p[3]) * 0x101
			dst[4*x] = uint32(p[0]) * a / 0xff
			dst[4*x+1] = uint32(p[1]) * a / 0xff
			dst[4*x+2] = uint32(p[2]) * a / 0xff
			dst[4*x+3] = a
		}
	case *image.Gray:
		row := src.Pix[(y+b.Min.Y-src.Rect.Min.Y)*src.Stride+(b.Min.X-src.Rect.Min.X):][:w]
		for x, v := range row {
			g := uint32(v) * 0x101
			dst[4*x], dst[4*x+1], dst[4*x+2], dst[4*x+3] = g, g, g, 0xffff
		}
		return true
	case *image.YCbCr:
		for x := range w {
			yi := src.YOffset(x+b.Min.X, y+b.Min.Y)
			ci := src.COffset(x+b.Min.X, y+b.Min.Y)
			rr, gg, bb, aa := color.YCbCr{Y: src.Y[yi], Cb: src.Cb[ci], Cr: src.Cr[ci]}.RGBA()
			dst[4*x], dst[4*x+1], dst[4*x+2], dst[4*x+3] = rr, gg, bb, aa
		}
		switch src.SubsampleRatio {
		case image.YCbCrSubsampleRatio444, image.YCbCrSubsampleRatio422, image.YCbCrSubsampleRatio420, image.YCbCrSubsampleRatio440:
			return true
		}
	case image.RGBA64Image:
		for x := range w {
			c := src.RGBA64At(x+b.Min.X, y+b.Min.Y)
			dst[4*x], dst[4*x+1], dst[4*x+2], dst[4*x+3] = uint32(c.R), uint32(c.G), uint32(c.B), uint32(c.A)
		}
	default:
		for x := range w {
			rr, gg, bb, aa := img.At(x+b.Min.X, y+b.Min.Y).RGBA()
			dst[4*x], dst[4*x+1], dst[4*x+2], dst[4*x+3] = rr, gg, bb, aa
		}
	}
	return false
}
