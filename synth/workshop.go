package synth

import "math"

// buildWorkshop fills b with an industrial hall: a concrete floor with
// painted lanes along a central aisle, steel columns, machines, drums,
// racks, pallets and overhead pipes. The camera stands in the aisle, or,
// in about a third of the pairs, looks down at a workbench with parts from
// half a metre above it.
func buildWorkshop(b *builder) {
	hw := b.uni(5, 9)     // half width
	deep := b.uni(18, 26) // far wall
	height := b.uni(5, 8)
	aisle := b.uni(1.2, 2) // half width of the aisle

	var floor uint16
	if b.chance(0.7) {
		floor = b.mat(material{kind: texMottled, // concrete
			base: b.tint(rgb{0.58, 0.57, 0.55}, 0.08), alt: b.tint(rgb{0.42, 0.42, 0.41}, 0.08),
			scale: b.uni(0.3, 0.9), contrast: 0.5})
	} else {
		floor = b.mat(material{kind: texTiles, // coated slabs
			base: b.tint(rgb{0.45, 0.55, 0.5}, 0.15), alt: b.tint(rgb{0.38, 0.46, 0.42}, 0.15),
			ink: rgb{0.25, 0.27, 0.26}, scale: 0.3, size2: b.uni(1, 2), contrast: 0.3})
	}
	wall := b.mat(material{kind: texTiles, // block wall
		base: b.tint(rgb{0.7, 0.68, 0.64}, 0.1), alt: b.tint(rgb{0.56, 0.55, 0.52}, 0.1),
		ink: rgb{0.4, 0.4, 0.4}, scale: 0.15, size2: b.uni(0.2, 0.4), contrast: 0.3})
	cladding := b.mat(material{kind: texPanels,
		base: b.tint(rgb{0.75, 0.78, 0.8}, 0.1), alt: b.tint(rgb{0.6, 0.64, 0.68}, 0.1),
		ink: b.tint(rgb{0.35, 0.37, 0.4}, 0.1), scale: 0.5, size2: b.uni(0.8, 1.5), contrast: 0.35})
	roof := b.mat(material{kind: texStripes, // corrugated roof sheets
		base: b.tint(rgb{0.7, 0.72, 0.74}, 0.08), alt: b.tint(rgb{0.55, 0.57, 0.6}, 0.08),
		scale: b.uni(0.15, 0.3), size2: 1})
	far := wall
	if b.chance(0.5) {
		far = cladding
	}
	b.room(vec3{-hw, 0, -3}, vec3{hw, height, deep}, [6]uint16{wall, cladding, floor, roof, wall, far})

	// Lanes: yellow or white lines along the aisle, hazard stripes across.
	line := b.mat(material{kind: texFlat, base: b.tint([2]rgb{{0.85, 0.72, 0.15}, {0.85, 0.85, 0.82}}[b.intn(2)], 0.08)})
	lw := b.uni(0.06, 0.12)
	for _, side := range [2]float64{-1, 1} {
		x := side * aisle
		b.box(vec3{x - lw/2, 0, -3}, vec3{x + lw/2, 0.003, deep}, all6(line))
	}
	hazard := b.mat(material{kind: texStripes,
		base: rgb{0.85, 0.72, 0.15}, alt: rgb{0.1, 0.1, 0.1}, scale: b.uni(0.15, 0.3), size2: 0.3})
	for k := b.intn(3); k > 0; k-- {
		z := b.uni(3, deep-2)
		b.box(vec3{-aisle, 0, z}, vec3{aisle, 0.003, z + b.uni(0.3, 0.6)}, all6(hazard))
	}

	// Columns with a beam across the hall at the top.
	steel := b.mat(material{kind: texMottled,
		base: b.tint([3]rgb{{0.2, 0.3, 0.55}, {0.75, 0.4, 0.1}, {0.5, 0.52, 0.55}}[b.intn(3)], 0.1),
		alt:  rgb{0.3, 0.3, 0.32}, scale: 0.3, contrast: 0.2})
	colX := aisle + b.uni(2, 3.5)
	for z := b.uni(1, 4); z < deep-1; z += b.uni(5, 7) {
		for _, side := range [2]float64{-1, 1} {
			x := side * colX
			b.box(vec3{x - 0.18, 0, z - 0.18}, vec3{x + 0.18, height, z + 0.18}, all6(steel))
		}
		b.box(vec3{-hw, height - 0.5, z - 0.15}, vec3{hw, height - 0.1, z + 0.15}, all6(steel))
	}

	// Machines along both sides of the aisle, with control panels and
	// labels on the faces towards the aisle.
	paint := func() uint16 {
		col := [5]rgb{{0.3, 0.5, 0.35}, {0.55, 0.57, 0.6}, {0.2, 0.35, 0.6}, {0.85, 0.5, 0.15}, {0.85, 0.82, 0.75}}[b.intn(5)]
		return b.mat(material{kind: texMottled, base: b.tint(col, 0.1), alt: b.tint(col.mul(0.8), 0.1),
			scale: b.uni(0.1, 0.4), contrast: 0.3})
	}
	panel := b.mat(material{kind: texLabels,
		base: b.tint(rgb{0.3, 0.32, 0.35}, 0.2), alt: b.tint(rgb{0.25, 0.26, 0.28}, 0.2),
		ink: rgb{0.1, 0.1, 0.1}, scale: b.uni(0.12, 0.25), density: 0.7, contrast: 0.3})
	for _, side := range [2]float64{-1, 1} {
		for z := b.uni(0, 2); z < deep-2; {
			l := b.uni(1, 3)
			if b.chance(0.25) {
				z += l
				continue
			}
			d := b.uni(0.8, 2)
			mh := b.uni(0.9, 2.5)
			x0 := aisle + b.uni(0.4, 1)
			lo := vec3{math.Min(side*x0, side*(x0+d)), 0, z}
			hi := vec3{math.Max(side*x0, side*(x0+d)), mh, z + l}
			m := paint()
			b.box(lo, hi, all6(m))
			// A panel on the face towards the aisle.
			px := side * x0
			pw := math.Min(l*0.4, 0.6)
			pz := z + b.uni(0.1, l-pw-0.1)
			py := b.uni(0.8, math.Max(0.85, mh-0.5))
			b.box(vec3{px - 0.03, py, pz}, vec3{px + 0.03, py + 0.4, pz + pw}, all6(panel))
			if b.chance(0.4) { // a tank on top or beside
				r := b.uni(0.2, 0.5)
				b.cylinder((lo.x+hi.x)/2, z+l/2, r, mh, mh+b.uni(0.4, 1.2), m, m)
			}
			z += l + b.uni(0.3, 1.5)
		}
	}

	// Drums near the aisle.
	for k := b.intn(3); k > 0; k-- {
		side := b.side()
		cx := side * (aisle + b.uni(0.2, 0.6))
		cz := b.uni(2, deep-3)
		col := [4]rgb{{0.15, 0.3, 0.65}, {0.7, 0.15, 0.1}, {0.2, 0.5, 0.25}, {0.5, 0.5, 0.52}}[b.intn(4)]
		drum := b.mat(material{kind: texMottled, base: b.tint(col, 0.1), alt: b.tint(col.mul(0.75), 0.1), scale: 0.1, contrast: 0.4})
		lid := b.mat(material{kind: texFlat, base: b.tint(col.mul(0.9), 0.1)})
		for j := 1 + b.intn(4); j > 0; j-- {
			b.cylinder(cx+b.uni(-0.4, 0.4), cz+b.uni(-0.4, 0.4), 0.29, 0, 0.88, drum, lid)
		}
	}

	// Racks with cartons and pallets against the far wall.
	shelf := b.mat(material{kind: texFlat, base: b.tint(rgb{0.6, 0.62, 0.64}, 0.1)})
	for x := -hw + 0.5 + b.uni(0, 1); x < hw-2; {
		uw := b.uni(1.5, 2.5)
		if b.chance(0.3) {
			x += uw
			continue
		}
		shelving(b, x, x+uw, deep-1.1, deep-0.05, b.uni(2, math.Min(3.5, height-0.5)), true, steel, shelf)
		x += uw + b.uni(0.1, 0.6)
	}
	pallet := b.mat(material{kind: texBoards,
		base: b.tint(rgb{0.68, 0.55, 0.38}, 0.1), alt: b.tint(rgb{0.52, 0.42, 0.3}, 0.1),
		ink: rgb{0.15, 0.1, 0.07}, scale: 0.08, size2: 0.1, contrast: 0.4})
	for k := b.intn(3); k > 0; k-- {
		side := b.side()
		x := side * (colX + b.uni(0.8, 1.5))
		z := b.uni(3, deep-3)
		b.box(vec3{x - 0.6, 0, z - 0.5}, vec3{x + 0.6, 0.15, z + 0.5}, all6(pallet))
		y := 0.15
		for j := 1 + b.intn(3); j > 0; j-- {
			sh := b.uni(0.3, 0.5)
			b.box(vec3{x - 0.55, y, z - 0.45}, vec3{x + 0.55, y + sh, z + 0.45}, all6(carton(b)))
			y += sh
		}
	}

	// Overhead pipes along the hall and across it.
	pipeMat := func() uint16 {
		col := [4]rgb{{0.75, 0.75, 0.73}, {0.2, 0.45, 0.2}, {0.7, 0.2, 0.12}, {0.25, 0.35, 0.6}}[b.intn(4)]
		return b.mat(material{kind: texMottled, base: b.tint(col, 0.08), alt: b.tint(col.mul(0.8), 0.08), scale: 0.2, contrast: 0.3})
	}
	for k := 2 + b.intn(4); k > 0; k-- {
		m := pipeMat()
		b.pipe(false, b.uni(-hw+0.5, hw-0.5), b.uni(3, height-0.7), b.uni(0.05, 0.25), -3, deep, m, m)
	}
	for k := b.intn(3); k > 0; k-- {
		m := pipeMat()
		b.pipe(true, b.uni(2, deep-2), b.uni(3, height-0.7), b.uni(0.05, 0.2), -hw, hw, m, m)
	}

	if b.chance(0.35) {
		workbench(b)
	} else {
		b.sc.setPose(vec3{b.uni(-0.5, 0.5) * aisle, b.uni(0.4, 1.4), b.uni(-1.5, 1)},
			b.uni(-0.3, 0.3), b.uni(-0.2, 0.05))
	}
	b.lighting(0.55, 0.75, 0.25, 0.45)
}

// workbench adds a bench with parts in the aisle ahead of the origin and puts
// the camera half a metre above it, looking down at it. The camera depth
// of the bench top and of parts on it stays above 0.3 m at a 2:1 image.
func workbench(b *builder) {
	top := b.uni(0.8, 0.95)
	bw := b.uni(1.2, 2)
	bd := b.uni(0.7, 0.9)
	z0 := b.uni(0.5, 1)
	wood := b.mat(material{kind: texBoards,
		base: b.tint(rgb{0.62, 0.5, 0.35}, 0.12), alt: b.tint(rgb{0.5, 0.4, 0.28}, 0.12),
		ink: rgb{0.25, 0.2, 0.15}, scale: 0.1, size2: b.uni(0.1, 0.2), contrast: 0.4})
	if b.chance(0.4) {
		wood = b.mat(material{kind: texMottled, // steel sheet
			base: b.tint(rgb{0.55, 0.57, 0.6}, 0.08), alt: b.tint(rgb{0.42, 0.44, 0.47}, 0.08),
			scale: b.uni(0.05, 0.2), contrast: 0.4})
	}
	x0 := -bw / 2
	b.box(vec3{x0, top - 0.05, z0}, vec3{x0 + bw, top, z0 + bd}, all6(wood))
	legs := b.mat(material{kind: texFlat, base: b.tint(rgb{0.3, 0.32, 0.35}, 0.2)})
	for _, x := range [2]float64{x0, x0 + bw - 0.05} {
		for _, z := range [2]float64{z0, z0 + bd - 0.05} {
			b.box(vec3{x, 0, z}, vec3{x + 0.05, top - 0.05, z + 0.05}, all6(legs))
		}
	}
	// Parts: blocks, plates, cans and spheres, at most 0.1 m tall.
	for k := 3 + b.intn(8); k > 0; k-- {
		cx, cz := b.uni(x0+0.1, x0+bw-0.1), b.uni(z0+0.1, z0+bd-0.1)
		m := carton(b)
		if b.chance(0.5) {
			m = b.mat(material{kind: texMottled,
				base: b.tint([3]rgb{{0.6, 0.6, 0.62}, {0.72, 0.55, 0.25}, {0.2, 0.2, 0.22}}[b.intn(3)], 0.1),
				alt:  rgb{0.3, 0.3, 0.3}, scale: b.uni(0.01, 0.04), contrast: 0.5})
		}
		switch b.intn(4) {
		case 0:
			s := b.uni(0.03, 0.1)
			b.box(vec3{cx - s, top, cz - s*b.uni(0.5, 1)}, vec3{cx + s, top + b.uni(0.02, 0.1), cz + s}, all6(m))
		case 1:
			s := b.uni(0.05, 0.15)
			b.box(vec3{cx - s, top, cz - s}, vec3{cx + s, top + 0.01, cz + s}, all6(m))
		case 2:
			b.cylinder(cx, cz, b.uni(0.015, 0.05), top, top+b.uni(0.03, 0.1), m, m)
		default:
			r := b.uni(0.01, 0.05)
			b.sphere(vec3{cx, top + r, cz}, r, m)
		}
	}
	b.sc.setPose(vec3{b.uni(-0.3, 0.3) * bw, top + b.uni(0.45, 0.7), z0 + b.uni(-0.3, 0.1)},
		b.uni(-0.3, 0.3), -b.uni(0.4, 0.9))
}
