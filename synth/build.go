package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// builder assembles a scene from a seeded generator. Every random choice
// goes through rng in program order, so a seed fixes the scene.
type builder struct {
	sc  *scene
	rng *rand.Rand
}

func newBuilder(seed uint64, index int, style Style) *builder {
	// The stream depends on the seed, the pair index and the style, so pair
	// i of a run does not depend on how many pairs are made or in which
	// order.
	s2 := uint64(index)*0x9e3779b97f4a7c15 ^ uint64(style+1)*0xbf58476d1ce4e5b9
	return &builder{sc: &scene{}, rng: rand.New(rand.NewPCG(seed, s2))}
}

func (b *builder) uni(lo, hi float64) float64 { return lo + (hi-lo)*b.rng.Float64() }
func (b *builder) chance(p float64) bool      { return b.rng.Float64() < p }

// side returns -1 or +1 with equal chances (one draw, as chance(0.5)):
// which side of an aisle or row a thing stands on.
func (b *builder) side() float64 {
	if b.chance(0.5) {
		return -1
	}
	return 1
}
func (b *builder) intn(n int) int { return b.rng.IntN(n) }

// tint returns c with each component scaled by a factor in [1−a, 1+a].
func (b *builder) tint(c rgb, a float64) rgb {
	return rgb{
		clamp01(c[0] * b.uni(1-a, 1+a)),
		clamp01(c[1] * b.uni(1-a, 1+a)),
		clamp01(c[2] * b.uni(1-a, 1+a)),
	}
}

func (b *builder) seed() uint32 { return b.rng.Uint32() }

// mat adds a material and returns its index.
func (b *builder) mat(m material) uint16 {
	if m.seed == 0 {
		m.seed = b.seed()
	}
	b.sc.mats = append(b.sc.mats, m)
	return uint16(len(b.sc.mats) - 1)
}

func all6(m uint16) [6]uint16 { return [6]uint16{m, m, m, m, m, m} }

// box adds a solid axis-aligned box with one material per face (see the
// face numbering in shape.go).
func (b *builder) box(lo, hi vec3, mats [6]uint16) {
	b.sc.shapes = append(b.sc.shapes, shape{kind: shapeBox, lo: lo, hi: hi, mats: mats, uvOrigin: lo})
}

// room adds the enclosing room; faces are seen from inside.
func (b *builder) room(lo, hi vec3, mats [6]uint16) {
	b.sc.shapes = append(b.sc.shapes, shape{kind: shapeRoom, lo: lo, hi: hi, mats: mats, uvOrigin: lo})
}

// cylinder adds a vertical cylinder standing on y0 up to y1; mats holds the
// side, bottom and top materials.
func (b *builder) cylinder(x, z, r, y0, y1 float64, side, caps uint16) {
	b.sc.shapes = append(b.sc.shapes, shape{
		kind: shapeCylinder, centre: vec3{x, 0, z}, radius: r,
		lo: vec3{0, y0, 0}, hi: vec3{0, y1, 0},
		mats: [6]uint16{side, caps, caps},
	})
}

// pipe adds a horizontal cylinder of radius r along the x axis (alongX)
// or the z axis, with its axis at height y and (for alongX) depth c or
// (otherwise) abscissa c, from a0 to a1 along its axis.
func (b *builder) pipe(alongX bool, c, y, r, a0, a1 float64, side, caps uint16) {
	sh := shape{kind: shapeCylinder, radius: r, mats: [6]uint16{side, caps, caps}}
	if alongX {
		// Own frame (y, x, z): the axis is world x, the circle in (y, z).
		sh.axis, sh.centre, sh.lo, sh.hi = 1, vec3{y, 0, c}, vec3{0, a0, 0}, vec3{0, a1, 0}
	} else {
		// Own frame (x, z, y): the axis is world z, the circle in (x, y).
		sh.axis, sh.centre, sh.lo, sh.hi = 2, vec3{c, 0, y}, vec3{0, a0, 0}, vec3{0, a1, 0}
	}
	b.sc.shapes = append(b.sc.shapes, sh)
}

func (b *builder) sphere(c vec3, r float64, m uint16) {
	b.sc.shapes = append(b.sc.shapes, shape{kind: shapeSphere, centre: c, radius: r, mats: [6]uint16{m}})
}

// lighting sets a distant light from above at a random azimuth.
func (b *builder) lighting(ambLo, ambHi, difLo, difHi float64) {
	az := b.uni(0, 2*math.Pi)
	el := b.uni(0.7, 1.3)
	b.sc.light = vec3{math.Cos(az) * math.Cos(el), math.Sin(el), math.Sin(az) * math.Cos(el)}
	b.sc.ambient = b.uni(ambLo, ambHi)
	b.sc.diffuse = b.uni(difLo, difHi)
}

// buildScene returns scene number index of the style for the seed.
func buildScene(style Style, seed uint64, index int) (*scene, error) {
	b := newBuilder(seed, index, style)
	switch style {
	case Greenhouse:
		buildGreenhouse(b)
	case Storage:
		buildStorage(b)
	case Orchard:
		buildOrchard(b)
	case Workshop:
		buildWorkshop(b)
	default:
		return nil, fmt.Errorf("synth: unknown style %d", int(style))
	}
	if len(b.sc.shapes) > 1<<16 {
		return nil, fmt.Errorf("synth: scene has %d shapes, at most %d are supported", len(b.sc.shapes), 1<<16)
	}
	return b.sc, nil
}

// generate renders a pair with resolved options (see Generate).
func generate(style Style, seed uint64, index int, o Options) (*Pair, error) {
	return generatePair(style, seed, index, o, true)
}

// generatePair is generate; with developed false a varied pair keeps the
// clean rendered images (no blur, gain or noise), for the tests.
func generatePair(style Style, seed uint64, index int, o Options, developed bool) (*Pair, error) {
	vary, err := o.Vary.resolve(style)
	if err != nil {
		return nil, err
	}
	sp, ok := style.spec()
	if !ok {
		return nil, fmt.Errorf("synth: unknown style %d", int(style))
	}
	sc, err := buildScene(style, seed, index)
	if err != nil {
		return nil, err
	}
	if vary == VaryNone {
		rig, err := style.Rig(o.Width, o.Height)
		if err != nil {
			return nil, err
		}
		return render(sc, rig, o.Samples), nil
	}
	r := varyStream(seed, index, style, streamCapture)
	c := drawCapture(r, sp.minDepth)
	rig, err := variedRig(style, &c, o.Width, o.Height)
	if err != nil {
		return nil, err
	}
	varyScene(sc, r)
	p := renderShifted(sc, rig, o.Samples, c.RowShift)
	if developed {
		develop(p, &c, seed, index, style)
	}
	p.Capture = &c
	return p, nil
}
