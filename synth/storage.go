package synth

import "math"

// buildStorage fills b with a storage room: shelving units along the walls,
// cardboard boxes with printed labels, plastic bins, stacks on pallets.
func buildStorage(b *builder) {
	width := b.uni(3, 5)
	deep := b.uni(4, 8)
	height := b.uni(2.6, 3.4)
	hw := width / 2

	var floor uint16
	switch r := b.rng.Float64(); {
	case r < 0.5:
		floor = b.mat(material{kind: texTiles,
			base: b.tint(rgb{0.72, 0.7, 0.64}, 0.1), alt: b.tint(rgb{0.58, 0.56, 0.52}, 0.1),
			ink: b.tint(rgb{0.35, 0.34, 0.32}, 0.1), scale: 0.15, size2: b.uni(0.3, 0.6), contrast: 0.3})
	case r < 0.85:
		floor = b.mat(material{kind: texMottled,
			base: b.tint(rgb{0.55, 0.55, 0.53}, 0.1), alt: b.tint(rgb{0.4, 0.4, 0.39}, 0.1),
			scale: b.uni(0.3, 0.8), contrast: 0.45})
	default: // painted floor: untextured
		floor = b.mat(material{kind: texFlat, base: b.tint(rgb{0.45, 0.5, 0.45}, 0.2)})
	}
	plaster := func() uint16 {
		if b.chance(0.3) {
			return b.mat(material{kind: texFlat, base: b.tint(rgb{0.8, 0.78, 0.72}, 0.1)})
		}
		return b.mat(material{kind: texMottled,
			base: b.tint(rgb{0.82, 0.8, 0.75}, 0.08), alt: b.tint(rgb{0.68, 0.66, 0.62}, 0.08),
			scale: b.uni(0.3, 1), contrast: 0.25})
	}
	backWall := plaster()
	if b.chance(0.4) {
		backWall = b.mat(material{kind: texBoards, // wood panelling
			base: b.tint(rgb{0.62, 0.5, 0.36}, 0.12), alt: b.tint(rgb{0.48, 0.37, 0.26}, 0.12),
			ink: rgb{0.2, 0.15, 0.1}, scale: 0.12, size2: b.uni(0.12, 0.25), contrast: 0.4})
	}
	ceiling := b.mat(material{kind: texTiles,
		base: rgb{0.88, 0.88, 0.86}, alt: rgb{0.8, 0.8, 0.78},
		ink: rgb{0.6, 0.6, 0.6}, scale: 0.2, size2: 0.6, contrast: 0.3})
	b.room(vec3{-hw, 0, -1}, vec3{hw, height, deep}, [6]uint16{plaster(), plaster(), floor, ceiling, plaster(), backWall})

	// Painted safety markings on the floor.
	if b.chance(0.6) {
		line := b.mat(material{kind: texFlat, base: b.tint(rgb{0.85, 0.72, 0.15}, 0.1)})
		x := b.uni(-0.8, -0.4)
		b.box(vec3{x, 0, 0.5}, vec3{x + 0.08, 0.004, deep - 0.5}, all6(line))
	}
	if b.chance(0.4) {
		hazard := b.mat(material{kind: texStripes,
			base: rgb{0.85, 0.72, 0.15}, alt: rgb{0.12, 0.12, 0.12}, scale: 0.2, size2: 0.3})
		z := b.uni(3, deep-1)
		b.box(vec3{-1, 0, z}, vec3{1, 0.004, z + 0.4}, all6(hazard))
	}

	steel := b.mat(material{kind: texMottled,
		base: b.tint([3]rgb{{0.2, 0.3, 0.6}, {0.85, 0.45, 0.1}, {0.5, 0.52, 0.55}}[b.intn(3)], 0.1),
		alt:  rgb{0.3, 0.3, 0.32}, scale: 0.2, contrast: 0.2})
	shelfMat := b.mat(material{kind: texBoards,
		base: b.tint(rgb{0.7, 0.6, 0.45}, 0.1), alt: b.tint(rgb{0.55, 0.46, 0.34}, 0.1),
		ink: rgb{0.25, 0.2, 0.15}, scale: 0.1, size2: 0.3, contrast: 0.35})
	if b.chance(0.4) {
		shelfMat = b.mat(material{kind: texFlat, base: b.tint(rgb{0.6, 0.62, 0.64}, 0.1)})
	}

	// Shelving along the left and right walls (units run along z) and the
	// back wall (units run along x).
	for _, side := range [2]float64{-1, 1} {
		sd := b.uni(0.4, 0.6)
		for z := b.uni(0, 1); z < deep-0.8; {
			uw := math.Min(b.uni(1, 2), deep-z-0.05)
			x0 := side*hw - side*(sd+b.uni(0.02, 0.1))
			x1 := x0 + side*sd
			shelving(b, math.Min(x0, x1), math.Max(x0, x1), z, z+uw, b.uni(1.8, math.Min(2.4, height-0.2)), false, steel, shelfMat)
			z += uw + b.uni(0, 0.4)
		}
	}
	if b.chance(0.7) {
		sd := b.uni(0.4, 0.6)
		for x := -hw + 0.8 + b.uni(0, 0.5); x < hw-0.8; {
			uw := math.Min(b.uni(1, 2), hw-0.7-x)
			if uw < 0.5 {
				break
			}
			shelving(b, x, x+uw, deep-sd-0.05, deep-0.05, b.uni(1.8, math.Min(2.4, height-0.2)), true, steel, shelfMat)
			x += uw + b.uni(0, 0.4)
		}
	}

	// Stacks of boxes on the floor, some on pallets, away from the camera.
	for k := b.intn(5); k > 0; k-- {
		x := b.uni(-hw+1, hw-1)
		z := b.uni(1.5, deep-1.2)
		y := 0.0
		if b.chance(0.4) {
			pallet := b.mat(material{kind: texBoards,
				base: b.tint(rgb{0.68, 0.55, 0.38}, 0.1), alt: b.tint(rgb{0.52, 0.42, 0.3}, 0.1),
				ink: rgb{0.15, 0.1, 0.07}, scale: 0.08, size2: 0.1, contrast: 0.4})
			b.box(vec3{x - 0.5, 0, z - 0.4}, vec3{x + 0.5, 0.14, z + 0.4}, all6(pallet))
			y = 0.14
		}
		for j := 1 + b.intn(3); j > 0; j-- {
			sx, sy, sz := b.uni(0.3, 0.7), b.uni(0.25, 0.55), b.uni(0.3, 0.6)
			ox, oz := b.uni(-0.08, 0.08), b.uni(-0.08, 0.08)
			b.box(vec3{x + ox - sx/2, y, z + oz - sz/2}, vec3{x + ox + sx/2, y + sy, z + oz + sz/2}, all6(carton(b)))
			y += sy
		}
	}

	b.sc.setPose(vec3{b.uni(-0.4, 0.4), b.uni(1.05, 1.45), b.uni(-0.5, 0.5)},
		b.uni(-0.45, 0.45), b.uni(-0.3, -0.08))
	b.lighting(0.5, 0.65, 0.35, 0.5)
}

// carton returns a cardboard material with printed labels, or now and then
// a plastic bin colour.
func carton(b *builder) uint16 {
	switch r := b.rng.Float64(); {
	case r < 0.75:
		return b.mat(material{kind: texLabels,
			base: b.tint(rgb{0.62, 0.47, 0.3}, 0.12), alt: b.tint(rgb{0.52, 0.39, 0.25}, 0.12),
			ink:   b.tint([3]rgb{{0.08, 0.08, 0.1}, {0.6, 0.1, 0.08}, {0.1, 0.2, 0.5}}[b.intn(3)], 0.2),
			scale: b.uni(0.15, 0.3), density: b.uni(0.3, 0.8), contrast: 0.3})
	case r < 0.9:
		return b.mat(material{kind: texFlat,
			base: b.tint([4]rgb{{0.2, 0.35, 0.7}, {0.8, 0.2, 0.15}, {0.2, 0.6, 0.3}, {0.85, 0.75, 0.2}}[b.intn(4)], 0.15)})
	}
	return b.mat(material{kind: texMottled,
		base: b.tint(rgb{0.3, 0.32, 0.35}, 0.2), alt: b.tint(rgb{0.2, 0.21, 0.23}, 0.2),
		scale: 0.1, contrast: 0.4})
}

// shelving adds one shelving unit occupying [x0, x1] × [0, h] × [z0, z1]:
// four uprights, shelves at regular heights and items on the shelves.
// alongX says whether the unit runs along x (against the back wall) or z.
func shelving(b *builder, x0, x1, z0, z1, h float64, alongX bool, steel, shelfMat uint16) {
	const post = 0.04
	for _, x := range [2]float64{x0, x1 - post} {
		for _, z := range [2]float64{z0, z1 - post} {
			b.box(vec3{x, 0, z}, vec3{x + post, h, z + post}, all6(steel))
		}
	}
	levels := 3 + b.intn(3)
	gap := (h - 0.1) / float64(levels)
	for l := 0; l <= levels; l++ {
		y := 0.1 + float64(l)*gap - 0.025
		if l == levels {
			y = h - 0.025
		}
		b.box(vec3{x0, y, z0}, vec3{x1, y + 0.025, z1}, all6(shelfMat))
		if l == levels && b.chance(0.5) {
			continue
		}
		top := y + 0.025
		maxH := gap - 0.06
		if l == levels {
			maxH = 0.4
		}
		// Items along the unit's length, set back from its front by a
		// random amount.
		start, end := z0+post, z1-post
		across0, across1 := x0, x1
		if alongX {
			start, end = x0+post, x1-post
			across0, across1 = z0, z1
		}
		for p := start + b.uni(0, 0.1); p < end-0.15; {
			iw := math.Min(b.uni(0.2, 0.6), end-p)
			if b.chance(0.15) {
				p += iw
				continue
			}
			ih := b.uni(0.12, math.Max(0.13, math.Min(maxH, 0.45)))
			id := (across1 - across0) * b.uni(0.5, 0.95)
			a0 := across0 + (across1-across0-id)*b.uni(0, 1)
			m := all6(carton(b))
			if alongX {
				b.box(vec3{p, top, a0}, vec3{p + iw, top + ih, a0 + id}, m)
			} else {
				b.box(vec3{a0, top, p}, vec3{a0 + id, top + ih, p + iw}, m)
			}
			p += iw + b.uni(0.02, 0.15)
		}
	}
}
