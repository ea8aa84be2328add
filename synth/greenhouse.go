package synth

import "math"

// buildGreenhouse fills b with a greenhouse aisle: the rover looks along +z
// down an aisle between two rows of planters.
func buildGreenhouse(b *builder) {
	aisle := b.uni(0.55, 0.95) // half-width of the aisle
	bench := b.uni(0.6, 1.1)   // depth of the planters across the aisle
	margin := b.uni(0.4, 1.2)
	half := aisle + bench + margin
	length := b.uni(8, 16)
	height := b.uni(2.4, 3.4)

	soilMat := b.mat(material{kind: texSoil,
		base: b.tint(rgb{0.24, 0.17, 0.11}, 0.15), alt: b.tint(rgb{0.44, 0.33, 0.22}, 0.15),
		ink: b.tint(rgb{0.72, 0.68, 0.6}, 0.1), scale: b.uni(0.15, 0.35), size2: b.uni(0.04, 0.08), contrast: 0.5})
	panelW := b.uni(0.7, 1.3)
	glass := b.mat(material{kind: texPanels,
		base: b.tint(rgb{0.78, 0.86, 0.82}, 0.08), alt: b.tint(rgb{0.58, 0.7, 0.66}, 0.1),
		ink: b.tint(rgb{0.55, 0.57, 0.6}, 0.1), scale: b.uni(0.3, 0.6), size2: panelW, contrast: 0.45})
	roof := b.mat(material{kind: texPanels,
		base: b.tint(rgb{0.9, 0.93, 0.92}, 0.05), alt: b.tint(rgb{0.74, 0.8, 0.78}, 0.08),
		ink: b.tint(rgb{0.5, 0.52, 0.55}, 0.1), scale: 0.5, size2: panelW, contrast: 0.35})
	back := glass
	if b.chance(0.5) {
		back = b.mat(material{kind: texTiles, // block wall
			base: b.tint(rgb{0.6, 0.58, 0.55}, 0.12), alt: b.tint(rgb{0.45, 0.44, 0.42}, 0.12),
			ink: rgb{0.3, 0.3, 0.3}, scale: 0.12, size2: b.uni(0.3, 0.45), contrast: 0.35})
	}
	b.room(vec3{-half, 0, -1.5}, vec3{half, height, length}, [6]uint16{glass, glass, soilMat, roof, glass, back})

	// The aisle floor: duckboards, a concrete path or bare soil.
	switch r := b.rng.Float64(); {
	case r < 0.45:
		m := b.mat(material{kind: texBoards,
			base: b.tint(rgb{0.55, 0.42, 0.28}, 0.12), alt: b.tint(rgb{0.4, 0.3, 0.2}, 0.12),
			ink: rgb{0.12, 0.09, 0.06}, scale: 0.08, size2: b.uni(0.1, 0.16), contrast: 0.4})
		w := aisle * b.uni(0.7, 0.9)
		b.box(vec3{-w, 0, -1.5}, vec3{w, 0.03, length}, all6(m))
	case r < 0.75:
		m := b.mat(material{kind: texMottled,
			base: b.tint(rgb{0.62, 0.6, 0.57}, 0.08), alt: b.tint(rgb{0.48, 0.47, 0.45}, 0.08),
			scale: b.uni(0.2, 0.5), contrast: 0.4})
		w := aisle * b.uni(0.7, 0.95)
		b.box(vec3{-w, 0, -1.5}, vec3{w, 0.02, length}, all6(m))
	}

	foliage := func() uint16 {
		return b.mat(material{kind: texMottled,
			base: b.tint(rgb{0.16, 0.36, 0.12}, 0.25), alt: b.tint(rgb{0.42, 0.62, 0.22}, 0.2),
			scale: b.uni(0.04, 0.09), contrast: 0.8})
	}

	// Planters along both sides.
	for _, side := range [2]float64{-1, 1} {
		z := b.uni(-0.5, 0.8)
		for z < length-0.5 {
			l := b.uni(0.6, 2.2)
			h := b.uni(0.3, 0.9)
			d := bench * b.uni(0.7, 1)
			x0 := aisle + b.uni(0, 0.08)
			x1 := x0 + d
			var wall uint16
			switch r := b.rng.Float64(); {
			case r < 0.4: // slatted wooden crate
				wall = b.mat(material{kind: texBoards,
					base: b.tint(rgb{0.6, 0.46, 0.3}, 0.15), alt: b.tint(rgb{0.42, 0.3, 0.2}, 0.15),
					ink: rgb{0.15, 0.1, 0.07}, scale: 0.1, size2: b.uni(0.08, 0.15), contrast: 0.45})
			case r < 0.7: // painted
				wall = b.mat(material{kind: texMottled,
					base: b.tint(rgb{0.35, 0.45, 0.55}, 0.3), alt: b.tint(rgb{0.25, 0.32, 0.4}, 0.3),
					scale: b.uni(0.1, 0.3), contrast: 0.35})
			case r < 0.85: // moulded plastic: untextured
				wall = b.mat(material{kind: texFlat, base: b.tint(rgb{0.2, 0.22, 0.2}, 0.4)})
			default: // stone
				wall = b.mat(material{kind: texTiles,
					base: b.tint(rgb{0.6, 0.55, 0.5}, 0.1), alt: b.tint(rgb{0.45, 0.42, 0.4}, 0.1),
					ink: rgb{0.28, 0.27, 0.26}, scale: 0.08, size2: b.uni(0.15, 0.3), contrast: 0.4})
			}
			lo := vec3{math.Min(side*x0, side*x1), 0, z}
			hi := vec3{math.Max(side*x0, side*x1), h, z + l}
			mats := all6(wall)
			mats[3] = soilMat
			b.box(lo, hi, mats)
			// Plants and pots on top.
			for k := b.intn(5); k > 0; k-- {
				r := b.uni(0.08, 0.3)
				r = math.Min(r, math.Min(d, l)/2*0.95)
				cx := b.uni(lo.x+r, hi.x-r)
				cz := b.uni(lo.z+r, hi.z-r)
				base := h
				if b.chance(0.35) {
					pr := r * b.uni(0.6, 0.9)
					ph := b.uni(0.12, 0.3)
					pot := b.mat(material{kind: texMottled,
						base: b.tint(rgb{0.7, 0.38, 0.22}, 0.12), alt: b.tint(rgb{0.55, 0.28, 0.16}, 0.12),
						scale: 0.05, contrast: 0.4})
					b.cylinder(cx, cz, pr, h, h+ph, pot, soilMat)
					base = h + ph
				}
				b.sphere(vec3{cx, base + r*b.uni(0.4, 0.8), cz}, r, foliage())
			}
			z += l + b.uni(0.1, 0.8)
		}
	}

	// Posts and the roof beams they carry.
	postMat := b.mat(material{kind: texMottled,
		base: b.tint(rgb{0.8, 0.8, 0.78}, 0.08), alt: b.tint(rgb{0.62, 0.63, 0.62}, 0.08),
		scale: 0.15, contrast: 0.3})
	if b.chance(0.3) {
		postMat = b.mat(material{kind: texFlat, base: b.tint(rgb{0.2, 0.4, 0.25}, 0.2)})
	}
	spacing := b.uni(1.8, 3.2)
	postR := b.uni(0.03, 0.06)
	for z := b.uni(0.5, 2); z < length-0.3; z += spacing {
		for _, side := range [2]float64{-1, 1} {
			b.cylinder(side*(aisle+bench+b.uni(0.1, 0.3)), z, postR, 0, height, postMat, postMat)
		}
		b.box(vec3{-half, height - 0.12, z - 0.04}, vec3{half, height, z + 0.04}, all6(postMat))
	}

	// Hanging trays with plants, on thin hangers.
	for k := b.intn(5); k > 0; k-- {
		sx, sz := b.uni(0.4, 1.0), b.uni(0.3, 0.6)
		cx := b.uni(-half+0.6, half-0.6)
		cz := b.uni(1, length-1)
		y := b.uni(1.0, math.Min(height-0.4, 1.9))
		th := b.uni(0.04, 0.08)
		tray := b.mat(material{kind: texFlat, base: b.tint(rgb{0.12, 0.14, 0.12}, 0.5)})
		if b.chance(0.4) {
			tray = b.mat(material{kind: texBoards,
				base: b.tint(rgb{0.6, 0.48, 0.32}, 0.1), alt: b.tint(rgb{0.45, 0.35, 0.24}, 0.1),
				ink: rgb{0.15, 0.1, 0.07}, scale: 0.08, size2: 0.06, contrast: 0.4})
		}
		b.box(vec3{cx - sx/2, y, cz - sz/2}, vec3{cx + sx/2, y + th, cz + sz/2}, all6(tray))
		for _, dx := range [2]float64{-1, 1} {
			b.cylinder(cx+dx*(sx/2-0.03), cz, 0.008, y+th, height, postMat, postMat)
		}
		for j := 1 + b.intn(3); j > 0; j-- {
			r := b.uni(0.08, 0.16)
			b.sphere(vec3{b.uni(cx-sx/2+r, cx+sx/2-r), y + th*b.uni(-1, 1), b.uni(cz-sz/2, cz+sz/2)}, r, foliage())
		}
	}

	// A few crates on the aisle floor, near its edges and away from the rover.
	crate := b.mat(material{kind: texBoards,
		base: b.tint(rgb{0.66, 0.52, 0.34}, 0.1), alt: b.tint(rgb{0.5, 0.38, 0.25}, 0.1),
		ink: rgb{0.18, 0.12, 0.08}, scale: 0.07, size2: b.uni(0.07, 0.12), contrast: 0.45})
	for k := b.intn(3); k > 0; k-- {
		s := b.uni(0.3, 0.5)
		side := b.side()
		x := side * (aisle - s/2 - b.uni(0, 0.1))
		z := b.uni(2, length-1)
		y := 0.0
		for j := 1 + b.intn(2); j > 0; j-- {
			hs := s * b.uni(0.6, 1)
			b.box(vec3{x - s/2, y, z - s/2}, vec3{x + s/2, y + hs, z + s/2}, all6(crate))
			y += hs
			s *= b.uni(0.85, 1)
		}
	}

	b.sc.setPose(vec3{b.uni(-0.25, 0.25) * aisle, b.uni(0.35, 0.55), b.uni(-0.8, 0.3)},
		b.uni(-0.12, 0.12), b.uni(-0.18, 0.02))
	b.lighting(0.6, 0.75, 0.3, 0.45)
}
