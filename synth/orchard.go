package synth

import "math"

// buildOrchard fills b with an orchard alley: the robot looks along +z
// between two rows of trees; more rows lie beyond them, a tree line closes
// the plot on every side and the sky is a high ceiling, so every ray meets
// a surface within about 30 m.
func buildOrchard(b *builder) {
	rowGap := b.uni(3, 4.5) // distance between tree rows
	treeGap := b.uni(1.4, 2.8)
	far := b.uni(20, 26) // the tree line ahead
	half := b.uni(9, 12)
	const skyHeight = 14.0

	grass := b.mat(material{kind: texMottled,
		base: b.tint(rgb{0.25, 0.42, 0.14}, 0.2), alt: b.tint(rgb{0.45, 0.55, 0.22}, 0.2),
		scale: b.uni(0.08, 0.2), contrast: 0.6})
	treeLine := b.mat(material{kind: texMottled,
		base: b.tint(rgb{0.12, 0.25, 0.1}, 0.2), alt: b.tint(rgb{0.3, 0.42, 0.2}, 0.2),
		scale: b.uni(0.6, 1.5), contrast: 0.7})
	sky := b.mat(material{kind: texMottled,
		base: b.tint(rgb{0.55, 0.7, 0.9}, 0.1), alt: b.tint(rgb{0.92, 0.93, 0.95}, 0.05),
		scale: b.uni(3, 8), contrast: b.uni(0.1, 0.5)})
	b.room(vec3{-half, 0, -4}, vec3{half, skyHeight, far}, [6]uint16{treeLine, treeLine, grass, sky, treeLine, treeLine})

	// The alley: bare soil or mown grass, a little lower in tone.
	if b.chance(0.6) {
		m := b.mat(material{kind: texSoil,
			base: b.tint(rgb{0.36, 0.27, 0.18}, 0.15), alt: b.tint(rgb{0.5, 0.4, 0.28}, 0.15),
			ink: b.tint(rgb{0.7, 0.66, 0.6}, 0.1), scale: b.uni(0.15, 0.35), size2: b.uni(0.04, 0.1), contrast: 0.5})
		w := rowGap / 2 * b.uni(0.4, 0.7)
		b.box(vec3{-w, 0, -4}, vec3{w, 0.01, far}, all6(m))
	}

	bark := func() uint16 {
		return b.mat(material{kind: texBoards, // grain along the trunk (v)
			base: b.tint(rgb{0.4, 0.32, 0.24}, 0.2), alt: b.tint(rgb{0.26, 0.2, 0.15}, 0.2),
			ink: rgb{0.12, 0.1, 0.08}, scale: b.uni(0.05, 0.1), size2: b.uni(0.02, 0.05), contrast: 0.5})
	}
	foliage := func() uint16 {
		return b.mat(material{kind: texMottled,
			base: b.tint(rgb{0.14, 0.33, 0.1}, 0.25), alt: b.tint(rgb{0.4, 0.58, 0.2}, 0.25),
			scale: b.uni(0.05, 0.12), contrast: 0.8})
	}
	fruitCol := [3]rgb{{0.75, 0.12, 0.08}, {0.85, 0.6, 0.12}, {0.5, 0.7, 0.2}}[b.intn(3)]
	fruit := b.mat(material{kind: texMottled,
		base: b.tint(fruitCol, 0.1), alt: b.tint(fruitCol.mul(0.7), 0.1), scale: 0.03, contrast: 0.4})
	post := b.mat(material{kind: texBoards,
		base: b.tint(rgb{0.55, 0.48, 0.38}, 0.12), alt: b.tint(rgb{0.4, 0.35, 0.28}, 0.12),
		ink: rgb{0.2, 0.18, 0.15}, scale: 0.06, size2: 0.03, contrast: 0.4})
	wire := b.mat(material{kind: texFlat, base: b.tint(rgb{0.6, 0.6, 0.62}, 0.1)})

	// Rows of trees at x = ±rowGap/2, ±3·rowGap/2, … ; the nearer rows get
	// fruit and trellis wires, the farther ones only trunks and canopies.
	for k := 0; ; k++ {
		x := (float64(k) + 0.5) * rowGap
		if x > half-1 {
			break
		}
		for _, side := range [2]float64{-1, 1} {
			rx := side * x
			trellis := k == 0 && b.chance(0.7)
			z0 := b.uni(-2, 0.5)
			for z := z0; z < far-1.5; z += treeGap * b.uni(0.85, 1.15) {
				tx, tz := rx+b.uni(-0.15, 0.15), z
				trunkR := b.uni(0.05, 0.12)
				trunkH := b.uni(0.5, 1.1)
				b.cylinder(tx, tz, trunkR, 0, trunkH+0.3, bark(), bark())
				leaves := foliage()
				for j := 2 + b.intn(3); j > 0; j-- {
					r := b.uni(0.4, 0.75)
					c := vec3{tx + side*b.uni(-0.1, 0.4), trunkH + r*b.uni(0.5, 1.1), tz + b.uni(-0.5, 0.5)}
					b.sphere(c, r, leaves)
					if k == 0 {
						// Fruit hanging on the canopy's aisle-side surface.
						for f := b.intn(4); f > 0; f-- {
							a := b.uni(-1.2, 1.2)
							el := b.uni(-0.6, 0.3)
							d := vec3{-side * math.Cos(a) * math.Cos(el), math.Sin(el), math.Sin(a) * math.Cos(el)}
							fr := b.uni(0.03, 0.05)
							b.sphere(c.add(d.scale(r+fr*0.3)), fr, fruit)
						}
					}
				}
			}
			if trellis {
				for z := z0; z < far-1.5; z += b.uni(4, 7) {
					b.cylinder(rx, z, 0.04, 0, b.uni(1.8, 2.3), post, post)
				}
				for _, y := range [2]float64{b.uni(0.5, 0.9), b.uni(1.3, 1.8)} {
					b.box(vec3{rx - 0.005, y, z0}, vec3{rx + 0.005, y + 0.01, far - 1.5}, all6(wire))
				}
			}
		}
	}

	// Picking bins, stones and tufts along the alley.
	for k := b.intn(4); k > 0; k-- {
		s := b.uni(0.5, 1.0)
		side := b.side()
		x := side * (rowGap/2 - s/2 - b.uni(0.2, 0.6))
		z := b.uni(2, far-3)
		m := b.mat(material{kind: texBoards,
			base: b.tint(rgb{0.62, 0.5, 0.34}, 0.12), alt: b.tint(rgb{0.48, 0.37, 0.25}, 0.12),
			ink: rgb{0.15, 0.1, 0.07}, scale: 0.08, size2: b.uni(0.08, 0.14), contrast: 0.45})
		if b.chance(0.4) {
			m = b.mat(material{kind: texFlat, base: b.tint([3]rgb{{0.15, 0.3, 0.6}, {0.2, 0.5, 0.2}, {0.7, 0.2, 0.15}}[b.intn(3)], 0.15)})
		}
		b.box(vec3{x - s/2, 0, z - s/2}, vec3{x + s/2, s * b.uni(0.6, 0.9), z + s/2}, all6(m))
	}
	stone := b.mat(material{kind: texMottled,
		base: b.tint(rgb{0.55, 0.53, 0.5}, 0.1), alt: b.tint(rgb{0.38, 0.37, 0.35}, 0.1),
		scale: 0.05, contrast: 0.5})
	for k := b.intn(8); k > 0; k-- {
		r := b.uni(0.05, 0.2)
		b.sphere(vec3{b.uni(-rowGap/2, rowGap/2), -r * 0.4, b.uni(1, far-2)}, r, stone)
	}

	x := b.uni(-0.15, 0.15) * rowGap / 2
	y := b.uni(0.4, 0.8) // the ground stays beyond 0.3 m up to square images
	z := b.uni(-1.5, 0.5)
	yaw := b.uni(-0.25, 0.25)
	pitch := b.uni(-0.15, 0.08)
	b.sc.setPose(vec3{x, y, z}, yaw, pitch)

	// Now and then something within a metre: a leaf cluster or a stake in
	// front of the lens, at 0.3 m camera depth or more.
	if b.chance(0.5) {
		r := b.uni(0.05, 0.12)
		d := r + b.uni(0.3, 0.7)
		lat := b.uni(-0.4, 0.4) * d
		c := b.sc.origin.add(b.sc.fwd.scale(d)).add(b.sc.right.scale(lat))
		if b.chance(0.5) {
			c.y = math.Max(c.y+b.uni(-0.1, 0.1), r)
			b.sphere(c, r, foliage())
		} else {
			b.cylinder(c.x, c.z, b.uni(0.01, 0.025), 0, y+b.uni(0.2, 0.6), post, post)
		}
	}
	b.lighting(0.45, 0.65, 0.35, 0.6)
}
