package synth

import "math"

// shapeKind selects the analytic primitive a shape is.
type shapeKind uint8

const (
	shapeBox      shapeKind = iota // solid axis-aligned box, seen from outside
	shapeRoom                      // axis-aligned box seen from inside (floor, walls, ceiling)
	shapeCylinder                  // solid cylinder with flat caps, axis along y (or x or z, see shape.axis)
	shapeSphere                    // solid sphere
	shapePlane                     // infinite plane n·p = d, seen from either side
)

// Face numbers of boxes and rooms: 2·axis + (0 for the min side, 1 for the
// max side). Cylinders use faceSide, faceBottom and faceTop; spheres and
// planes use face 0.
const (
	faceSide   = 0
	faceBottom = 1
	faceTop    = 2
)

// shape is one analytic primitive. lo and hi bound boxes and rooms;
// cylinders use centre (x, z), radius and lo.y … hi.y in their own frame,
// which is the world frame with the y axis swapped for the x or z axis
// when axis is 1 or 2 (see swapAxis); spheres use centre and radius; planes
// use normal and offset. mats holds a material index per face.
type shape struct {
	kind     shapeKind
	lo, hi   vec3
	centre   vec3
	radius   float64
	normal   vec3
	offset   float64
	mats     [6]uint16
	uvOrigin vec3  // origin of surface coordinates (box corner, plane point)
	axis     uint8 // cylinders: 0 vertical (y), 1 along x, 2 along z
}

// swapAxis swaps the y component of p with its x (axis 1) or z (axis 2)
// component; it is its own inverse and the identity for axis 0.
func swapAxis(p vec3, axis uint8) vec3 {
	switch axis {
	case 1:
		return vec3{p.y, p.x, p.z}
	case 2:
		return vec3{p.x, p.z, p.y}
	}
	return p
}

// bounds returns the shape's axis-aligned bounding box and whether it is
// finite.
func (s *shape) bounds() (lo, hi vec3, finite bool) {
	switch s.kind {
	case shapeBox, shapeRoom:
		return s.lo, s.hi, true
	case shapeCylinder:
		r := s.radius
		lo, hi := vec3{s.centre.x - r, s.lo.y, s.centre.z - r}, vec3{s.centre.x + r, s.hi.y, s.centre.z + r}
		return swapAxis(lo, s.axis), swapAxis(hi, s.axis), true
	case shapeSphere:
		r := vec3{s.radius, s.radius, s.radius}
		return s.centre.sub(r), s.centre.add(r), true
	}
	return vec3{}, vec3{}, false
}

// ray is o + t·d with d scaled so that t is the depth (camera z) of the
// point; inv holds 1/d per component for the slab test.
type ray struct {
	o, d, inv vec3
}

func newRay(o, d vec3) ray {
	return ray{o: o, d: d, inv: vec3{1 / d.x, 1 / d.y, 1 / d.z}}
}

// intersect returns the smallest t > tMin at which r meets s, with the face
// hit, or ok = false.
func (s *shape) intersect(r *ray, tMin float64) (t float64, face int, ok bool) {
	switch s.kind {
	case shapeBox, shapeRoom:
		return s.intersectBox(r, tMin)
	case shapeCylinder:
		if s.axis != 0 {
			sr := ray{o: swapAxis(r.o, s.axis), d: swapAxis(r.d, s.axis), inv: swapAxis(r.inv, s.axis)}
			return s.intersectCylinder(&sr, tMin)
		}
		return s.intersectCylinder(r, tMin)
	case shapeSphere:
		oc := r.o.sub(s.centre)
		a := r.d.dot(r.d)
		b := oc.dot(r.d)
		c := oc.dot(oc) - s.radius*s.radius
		disc := b*b - a*c
		if disc < 0 {
			return 0, 0, false
		}
		sq := math.Sqrt(disc)
		if t = (-b - sq) / a; t > tMin {
			return t, 0, true
		}
		return 0, 0, false
	case shapePlane:
		den := s.normal.dot(r.d)
		if den == 0 {
			return 0, 0, false
		}
		t = (s.offset - s.normal.dot(r.o)) / den
		if t > tMin {
			return t, 0, true
		}
	}
	return 0, 0, false
}

// slab narrows a ray's interval tNear … tFar, entered through nearFace and
// left through farFace, to the slab lo … hi of one axis (ray origin o,
// inverse direction inv), whose faces are face (lo) and face+1 (hi). The
// x axis starts the interval in intersectBox, so that a NaN from a ray
// along a face plane behaves as it always has.
func slab(lo, hi, o, inv float64, face int, tNear, tFar float64, nearFace, farFace int) (float64, float64, int, int) {
	t0, t1 := (lo-o)*inv, (hi-o)*inv
	f0, f1 := face, face+1
	if t0 > t1 {
		t0, t1, f0, f1 = t1, t0, f1, f0
	}
	if t0 > tNear {
		tNear, nearFace = t0, f0
	}
	if t1 < tFar {
		tFar, farFace = t1, f1
	}
	return tNear, tFar, nearFace, farFace
}

// intersectBox is the slab test over the three axes.
func (s *shape) intersectBox(r *ray, tMin float64) (float64, int, bool) {
	t0 := (s.lo.x - r.o.x) * r.inv.x
	t1 := (s.hi.x - r.o.x) * r.inv.x
	f0, f1 := 0, 1
	if t0 > t1 {
		t0, t1, f0, f1 = t1, t0, 1, 0
	}
	tNear, tFar, nearFace, farFace := t0, t1, f0, f1
	tNear, tFar, nearFace, farFace = slab(s.lo.y, s.hi.y, r.o.y, r.inv.y, 2, tNear, tFar, nearFace, farFace)
	tNear, tFar, nearFace, farFace = slab(s.lo.z, s.hi.z, r.o.z, r.inv.z, 4, tNear, tFar, nearFace, farFace)
	if !(tNear <= tFar) {
		return 0, 0, false
	}
	if s.kind == shapeRoom {
		return tFar, farFace, tFar > tMin
	}
	return tNear, nearFace, tNear > tMin
}

func (s *shape) intersectCylinder(r *ray, tMin float64) (float64, int, bool) {
	best, face, ok := math.Inf(1), 0, false
	ox, oz := r.o.x-s.centre.x, r.o.z-s.centre.z
	a := r.d.x*r.d.x + r.d.z*r.d.z
	if a > 0 {
		b := ox*r.d.x + oz*r.d.z
		c := ox*ox + oz*oz - s.radius*s.radius
		if disc := b*b - a*c; disc >= 0 {
			t := (-b - math.Sqrt(disc)) / a
			if t > tMin {
				if y := r.o.y + t*r.d.y; y >= s.lo.y && y <= s.hi.y {
					best, face, ok = t, faceSide, true
				}
			}
		}
	}
	if r.d.y != 0 {
		for _, cap := range [2]struct {
			y    float64
			face int
		}{{s.lo.y, faceBottom}, {s.hi.y, faceTop}} {
			t := (cap.y - r.o.y) * r.inv.y
			if t > tMin && t < best {
				x, z := ox+t*r.d.x, oz+t*r.d.z
				if x*x+z*z <= s.radius*s.radius {
					best, face, ok = t, cap.face, true
				}
			}
		}
	}
	return best, face, ok
}

// surface returns the outward normal (for rooms: pointing into the room)
// and the surface coordinates (u, v) in metres of the point p on face.
func (s *shape) surface(p vec3, face int) (n vec3, u, v float64) {
	switch s.kind {
	case shapeBox, shapeRoom:
		axis := face / 2
		sign := 1.0
		if face%2 == 0 {
			sign = -1
		}
		if s.kind == shapeRoom {
			sign = -sign
		}
		q := p.sub(s.uvOrigin)
		switch axis {
		case 0:
			n = vec3{sign, 0, 0}
			u, v = q.z, q.y
		case 1:
			n = vec3{0, sign, 0}
			u, v = q.x, q.z
		default:
			n = vec3{0, 0, sign}
			u, v = q.x, q.y
		}
		return n, u, v
	case shapeCylinder:
		if s.axis != 0 {
			n, u, v := s.cylinderSurface(swapAxis(p, s.axis), face)
			return swapAxis(n, s.axis), u, v
		}
		return s.cylinderSurface(p, face)
	case shapeSphere:
		q := p.sub(s.centre)
		n = q.scale(1 / s.radius)
		// Longitude arc and height; the seam of atan2 faces +z, away
		// from the cameras, which look along +z.
		return n, s.radius * math.Atan2(q.x, -q.z), q.y
	}
	q := p.sub(s.uvOrigin)
	// A tangent basis for the plane: any axis not parallel to the normal.
	t := vec3{1, 0, 0}
	if math.Abs(s.normal.x) > 0.9 {
		t = vec3{0, 0, 1}
	}
	tu := t.sub(s.normal.scale(t.dot(s.normal))).normalized()
	tv := s.normal.cross(tu)
	return s.normal, q.dot(tu), q.dot(tv)
}

// cylinderSurface is surface for a cylinder, with p in the cylinder's own
// frame (axis along y); n is returned in that frame.
func (s *shape) cylinderSurface(p vec3, face int) (n vec3, u, v float64) {
	q := vec3{p.x - s.centre.x, 0, p.z - s.centre.z}
	if face == faceSide {
		n = q.scale(1 / s.radius)
		// The seam of atan2 faces +z, away from the cameras (for a
		// vertical cylinder).
		return n, s.radius * math.Atan2(q.x, -q.z), p.y - s.lo.y
	}
	if face == faceTop {
		return vec3{0, 1, 0}, q.x, q.z
	}
	return vec3{0, -1, 0}, q.x, q.z
}
