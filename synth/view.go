package synth

import (
	"math"
	"sort"

	"github.com/parallaxdepth/parallax/depth"
)

// tileSize is the side, in pixels, of the screen tiles that bin shapes.
const tileSize = 8

// view is one camera of the pair, with its shapes binned into screen tiles
// so that a ray tests only the shapes whose projection can contain it.
type view struct {
	sc             *scene
	origin         vec3
	fx, fy, cx, cy float64
	w, h           int
	tilesX, tilesY int
	tileStart      []int32  // tile i holds tileItems[tileStart[i]:tileStart[i+1]]
	tileItems      []uint16 // shape indices, nearest minimum depth first
	minZ           []float64
}

// newView returns the camera at origin with the rig's intrinsics and the
// principal point's row cy.
func newView(sc *scene, rig *depth.Rig, origin vec3, cy float64) *view {
	v := &view{
		sc: sc, origin: origin,
		fx: rig.Fx, fy: rig.Fy, cx: rig.Cx, cy: cy,
		w: rig.Width, h: rig.Height,
	}
	v.tilesX = (v.w + tileSize - 1) / tileSize
	v.tilesY = (v.h + tileSize - 1) / tileSize
	n := len(sc.shapes)
	type rect struct{ x0, y0, x1, y1 int }
	rects := make([]rect, n)
	v.minZ = make([]float64, n)
	order := make([]int, n)
	full := rect{0, 0, v.tilesX - 1, v.tilesY - 1}
	for i := range sc.shapes {
		order[i] = i
		lo, hi, finite := sc.shapes[i].bounds()
		if !finite || sc.shapes[i].kind == shapeRoom {
			rects[i] = full
			continue
		}
		minZ := math.Inf(1)
		x0, y0, x1, y1 := math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)
		behind := false
		for c := 0; c < 8; c++ {
			q := boxCorner(lo, hi, c).sub(origin)
			z := q.dot(sc.fwd)
			minZ = math.Min(minZ, z)
			if z <= 1e-6 {
				behind = true
				continue
			}
			px := v.cx + v.fx*q.dot(sc.right)/z
			py := v.cy + v.fy*q.dot(sc.down)/z
			x0, x1 = math.Min(x0, px), math.Max(x1, px)
			y0, y1 = math.Min(y0, py), math.Max(y1, py)
		}
		v.minZ[i] = math.Max(minZ, 0)
		if behind {
			if hiZ := maxCornerZ(lo, hi, origin, sc.fwd); hiZ <= 0 {
				rects[i] = rect{1, 1, 0, 0} // entirely behind: in no tile
			} else {
				rects[i] = full
			}
			continue
		}
		// A margin of two pixels covers supersample offsets and rounding.
		r := rect{
			x0: tileOf(x0-2, v.tilesX), y0: tileOf(y0-2, v.tilesY),
			x1: tileOf(x1+2, v.tilesX), y1: tileOf(y1+2, v.tilesY),
		}
		if x1+2 < -0.5 || y1+2 < -0.5 || x0-2 > float64(v.w)-0.5 || y0-2 > float64(v.h)-0.5 {
			r = rect{1, 1, 0, 0} // off screen
		}
		rects[i] = r
	}
	sort.SliceStable(order, func(a, b int) bool { return v.minZ[order[a]] < v.minZ[order[b]] })
	tiles := v.tilesX * v.tilesY
	counts := make([]int32, tiles+1)
	for _, i := range order {
		r := rects[i]
		for ty := r.y0; ty <= r.y1; ty++ {
			for tx := r.x0; tx <= r.x1; tx++ {
				counts[ty*v.tilesX+tx+1]++
			}
		}
	}
	for t := 0; t < tiles; t++ {
		counts[t+1] += counts[t]
	}
	v.tileStart = counts
	v.tileItems = make([]uint16, counts[tiles])
	fill := append([]int32(nil), counts[:tiles]...)
	for _, i := range order {
		r := rects[i]
		for ty := r.y0; ty <= r.y1; ty++ {
			for tx := r.x0; tx <= r.x1; tx++ {
				t := ty*v.tilesX + tx
				v.tileItems[fill[t]] = uint16(i)
				fill[t]++
			}
		}
	}
	return v
}

// boxCorner returns corner c (0 … 7) of the box lo … hi: bit 0 of c picks
// hi.x over lo.x, bit 1 hi.y, bit 2 hi.z.
func boxCorner(lo, hi vec3, c int) vec3 {
	p := lo
	if c&1 != 0 {
		p.x = hi.x
	}
	if c&2 != 0 {
		p.y = hi.y
	}
	if c&4 != 0 {
		p.z = hi.z
	}
	return p
}

func maxCornerZ(lo, hi, origin, fwd vec3) float64 {
	z := math.Inf(-1)
	for c := 0; c < 8; c++ {
		z = math.Max(z, boxCorner(lo, hi, c).sub(origin).dot(fwd))
	}
	return z
}

// tileOf returns the tile holding pixel coordinate p (pixel x covers
// [x−½, x+½]), clamped to [0, n−1].
func tileOf(p float64, n int) int {
	t := int(math.Floor((p + 0.5) / tileSize))
	if t < 0 {
		return 0
	}
	if t > n-1 {
		return n - 1
	}
	return t
}

// hit is the nearest intersection of a ray: depth t (camera z, metres),
// shape index and face; shape < 0 means the ray hit nothing.
type hit struct {
	t     float64
	shape int32
	face  int32
}

// nearZ is the smallest depth a hit may have, metres.
const nearZ = 1e-3

// dir returns the world direction of the ray through pixel coordinates
// (px, py), scaled so that its component along the optical axis is 1.
func (v *view) dir(px, py float64) vec3 {
	sc := v.sc
	return sc.right.scale((px - v.cx) / v.fx).add(sc.down.scale((py - v.cy) / v.fy)).add(sc.fwd)
}

// trace casts the ray through pixel coordinates (px, py) of the view.
func (v *view) trace(px, py float64) hit {
	sc := v.sc
	r := newRay(v.origin, v.dir(px, py))
	h := hit{t: math.Inf(1), shape: -1}
	tx, ty := tileOf(px, v.tilesX), tileOf(py, v.tilesY)
	tile := ty*v.tilesX + tx
	for _, i := range v.tileItems[v.tileStart[tile]:v.tileStart[tile+1]] {
		if v.minZ[i] >= h.t {
			break // every remaining shape lies farther than the hit
		}
		if t, face, ok := sc.shapes[i].intersect(&r, nearZ); ok && t < h.t {
			h.t, h.shape, h.face = t, int32(i), int32(face)
		}
	}
	return h
}

// shade returns the colour of a hit. The colour depends only on the surface
// point, never on the view: textures are functions of surface coordinates,
// the light is Lambertian (diffuse, from a fixed direction) and the texture
// footprint is measured from the midpoint of the two cameras.
func (v *view) shade(h *hit, px, py float64, mid vec3) rgb {
	if h.shape < 0 {
		return rgb{}
	}
	sc := v.sc
	s := &sc.shapes[h.shape]
	p := v.origin.add(v.dir(px, py).scale(h.t))
	n, u, w := s.surface(p, int(h.face))
	toMid := mid.sub(p)
	dist := toMid.length()
	cosView := n.dot(toMid) / dist
	if cosView < 0 && s.kind == shapePlane {
		n, cosView = n.scale(-1), -cosView
	}
	fp := h.t / v.fx / math.Max(math.Abs(cosView), 0.25)
	m := &sc.mats[s.mats[h.face]]
	c := m.color(u, w, fp, uint32(h.shape)*6+uint32(h.face))
	light := sc.ambient*(0.85+0.15*n.y) + sc.diffuse*math.Max(0, n.dot(sc.light))
	return c.mul(light)
}
