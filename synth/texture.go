package synth

import "math"

// texKind selects a procedural texture. Every texture is a function of
// surface coordinates (u, v) in metres, so both views see the same surface
// pattern, and of the pixel footprint, by which it is pre-filtered.
type texKind uint8

const (
	texFlat    texKind = iota // one colour: an untextured region
	texMottled                // smooth two-colour noise: paint, plaster, foliage
	texSoil                   // dark noisy soil with pale pebbles
	texBoards                 // boards along u with gaps, per-board tint and grain
	texTiles                  // square tiles with grout lines
	texLabels                 // cardboard with printed labels: text lines and bar codes
	texPanels                 // glazing panels in a frame grid
	texStripes                // painted diagonal stripes
)

// material is the surface description of a face. Fields that a kind does
// not use are ignored.
type material struct {
	kind      texKind
	base, alt rgb     // main colours; alt is the second noise colour or the stripe colour
	ink       rgb     // printed or frame colour
	scale     float64 // main feature size, metres
	size2     float64 // secondary size (board width, tile size, panel width), metres
	density   float64 // labels: probability of a label per cell
	contrast  float64 // noise contrast, 0…1
	seed      uint32
}

// color evaluates the material at surface point (u, v) with footprint fp
// (metres per pixel on the surface); face varies the pattern per face.
func (m *material) color(u, v, fp float64, face uint32) rgb {
	seed := m.seed ^ face*0x27d4eb2f
	if m.kind == texFlat {
		return m.base
	}
	// Fine grain on every textured surface, a brightness change of up to
	// ±grainAmp, so that near surfaces keep detail at the pixel scale.
	g := fbm(u, v, grainScale, 3, fp, seed^0x2545f491)
	g = 2*contrastCurve(g, 1) - 1 // stretch the narrow spread of summed noise
	return m.pattern(u, v, fp, seed).mul(1 + grainAmp*g)
}

// Grain: lattice spacing in metres and relative amplitude.
const (
	grainScale = 0.06
	grainAmp   = 0.12
)

// pattern evaluates the material's own pattern (without grain).
func (m *material) pattern(u, v, fp float64, seed uint32) rgb {
	switch m.kind {
	case texFlat:
		return m.base
	case texMottled:
		n := fbm(u, v, m.scale, 6, fp, seed)
		return mix(m.base, m.alt, contrastCurve(n, m.contrast))
	case texSoil:
		return soil(m, u, v, fp, seed)
	case texBoards:
		return boards(m, u, v, fp, seed)
	case texTiles:
		return tiles(m, u, v, fp, seed)
	case texLabels:
		return labels(m, u, v, fp, seed)
	case texPanels:
		return panels(m, u, v, fp, seed)
	case texStripes:
		s := (u + v) * math.Sqrt2 / 2
		c := periodicLine(s, m.scale, m.scale/2, fp)
		n := fbm(u, v, m.size2, 3, fp, seed)
		return mix(m.base, m.alt, c).mul(0.9 + 0.2*n)
	}
	return m.base
}

// contrastCurve stretches n around ½ by 1+3c and clamps to [0, 1].
func contrastCurve(n, c float64) float64 { return clamp01(0.5 + (n-0.5)*(1+3*c)) }

func soil(m *material, u, v, fp float64, seed uint32) rgb {
	n := fbm(u, v, m.scale, 6, fp, seed)
	c := mix(m.base, m.alt, contrastCurve(n, m.contrast))
	// Pebbles: at most one disc per cell of size size2, inside its cell.
	cs := m.size2
	iu, iv := cellIndex(u, cs), cellIndex(v, cs)
	h := hash2(iu, iv, seed^0x5bd1e995)
	if h&3 != 0 { // one cell in four holds a pebble
		return c
	}
	r := cs * (0.12 + 0.2*unit(hash2(iu, iv, seed^0x1b873593)))
	cu := (float64(iu)+0.5)*cs + (cs/2-r)*(2*unit(hash2(iu, iv, seed^0x85ebca6b))-1)
	cv := (float64(iv)+0.5)*cs + (cs/2-r)*(2*unit(hash2(iu, iv, seed^0xc2b2ae35))-1)
	d := math.Hypot(u-cu, v-cv)
	cov := coverage(d, -r, r, fp) * lodWeight(2*r, fp)
	pebble := mix(m.ink, m.base, 0.3*unit(h>>2))
	return mix(c, pebble, cov)
}

func boards(m *material, u, v, fp float64, seed uint32) rgb {
	bw := m.size2
	ib := cellIndex(v, bw)
	tint := 0.8 + 0.35*unit(hash2(ib, 0, seed))
	// Grain: noise stretched along the board.
	g := fbm(u*0.15, v, m.scale, 4, fp, seed+uint32(ib))
	c := mix(m.base, m.alt, contrastCurve(g, m.contrast)).mul(tint)
	gap := periodicLine(v, bw, bw*0.08, fp)
	return mix(c, m.ink, gap)
}

func tiles(m *material, u, v, fp float64, seed uint32) rgb {
	ts := m.size2
	iu, iv := cellIndex(u, ts), cellIndex(v, ts)
	tint := 0.85 + 0.25*unit(hash2(iu, iv, seed))
	n := fbm(u, v, m.scale, 4, fp, seed^0xabcdef)
	c := mix(m.base, m.alt, contrastCurve(n, m.contrast)).mul(tint)
	gw := ts * 0.05
	return mix(c, m.ink, gridLines(u, v, ts, ts, gw, fp))
}

func panels(m *material, u, v, fp float64, seed uint32) rgb {
	pw := m.size2
	ph := pw * 1.6
	iu, iv := cellIndex(u, pw), cellIndex(v, ph)
	n := fbm(u*3, v*0.5, m.scale, 4, fp, seed+uint32(iu)*7+uint32(iv))
	tint := 0.9 + 0.2*unit(hash2(iu, iv, seed))
	c := mix(m.base, m.alt, contrastCurve(n, m.contrast)).mul(tint)
	fw := pw * 0.06
	return mix(c, m.ink, gridLines(u, v, pw, ph, fw, fp))
}

// gridLines is the coverage of a grid of lines w wide, spaced cu apart
// along u and cv along v: the union of the two sets of lines (grout,
// panel frames).
func gridLines(u, v, cu, cv, w, fp float64) float64 {
	a, b := periodicLine(u, cu, w, fp), periodicLine(v, cv, w, fp)
	return a + b - a*b
}

// labels draws cardboard and, in cells of size scale, printed paper labels
// with rows of "words" (dark bars) and sometimes a bar code.
func labels(m *material, u, v, fp float64, seed uint32) rgb {
	n := fbm(u, v, m.scale*0.3, 4, fp, seed)
	c := mix(m.base, m.alt, contrastCurve(n, m.contrast))
	cs := m.scale
	iu, iv := cellIndex(u, cs), cellIndex(v, cs)
	if unit(hash2(iu, iv, seed^0x68e31da4)) >= m.density {
		return c
	}
	// Label rectangle inside the cell.
	h1 := unit(hash2(iu, iv, seed^0x1))
	h2 := unit(hash2(iu, iv, seed^0x2))
	lw := cs * (0.45 + 0.4*h1)
	lh := cs * (0.3 + 0.4*h2)
	u0 := float64(iu)*cs + (cs-lw)*unit(hash2(iu, iv, seed^0x3))
	v0 := float64(iv)*cs + (cs-lh)*unit(hash2(iu, iv, seed^0x4))
	paper := coverage(u, u0, u0+lw, fp) * coverage(v, v0, v0+lh, fp)
	if paper == 0 {
		return c
	}
	// Content: text rows or a bar code, inset by a margin.
	mg := 0.1 * math.Min(lw, lh)
	lu, lv := u-u0-mg, v-v0-mg
	iw, ih := lw-2*mg, lh-2*mg
	var ink float64
	inside := coverage(lu, 0, iw, fp) * coverage(lv, 0, ih, fp)
	if inside > 0 {
		if hash2(iu, iv, seed^0x5)&3 == 0 {
			// Bar code: vertical bars of random width on a grid of cs/60.
			bw := cs / 60
			ib := cellIndex(lu, bw)
			on := hash2(ib, iv, seed^0x6)&1 == 0
			if on {
				ink = coverage(lu, float64(ib)*bw, float64(ib+1)*bw, fp)
			}
			ink *= lodWeight(2*bw, fp)
		} else {
			// Text: rows of height rh, words of random length with gaps.
			rh := cs / 12
			ir := cellIndex(lv, rh)
			row := coverage(lv, float64(ir)*rh+0.2*rh, float64(ir)*rh+0.8*rh, fp)
			ww := cs / 20
			iw2 := cellIndex(lu, ww)
			if hash2(iw2, ir, seed^0x7)%5 != 0 {
				ink = row * coverage(lu, float64(iw2)*ww+0.1*ww, float64(iw2+1)*ww, fp)
			}
			ink *= lodWeight(rh, fp)
		}
		ink *= inside
	}
	label := mix(rgb{0.93, 0.92, 0.88}, m.ink, ink)
	return mix(c, label, paper)
}
