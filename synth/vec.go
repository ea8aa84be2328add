package synth

import "math"

// vec3 is a point or direction in metres. The world frame has Y up; each
// camera frame has x right, y down and z forward (see doc.go).
type vec3 struct{ x, y, z float64 }

func (a vec3) add(b vec3) vec3      { return vec3{a.x + b.x, a.y + b.y, a.z + b.z} }
func (a vec3) sub(b vec3) vec3      { return vec3{a.x - b.x, a.y - b.y, a.z - b.z} }
func (a vec3) scale(s float64) vec3 { return vec3{a.x * s, a.y * s, a.z * s} }
func (a vec3) dot(b vec3) float64   { return a.x*b.x + a.y*b.y + a.z*b.z }
func (a vec3) length() float64      { return math.Sqrt(a.dot(a)) }
func (a vec3) normalized() vec3     { return a.scale(1 / a.length()) }
func (a vec3) cross(b vec3) vec3 {
	return vec3{a.y*b.z - a.z*b.y, a.z*b.x - a.x*b.z, a.x*b.y - a.y*b.x}
}

func clamp01(v float64) float64 {
	if v < 0 {
		return 0
	}
	if v > 1 {
		return 1
	}
	return v
}

func lerp(a, b, t float64) float64 { return a + (b-a)*t }

// rgb is a colour with components in [0, 1] (gamma-encoded, like planar).
type rgb [3]float64

func mix(a, b rgb, t float64) rgb {
	return rgb{lerp(a[0], b[0], t), lerp(a[1], b[1], t), lerp(a[2], b[2], t)}
}

func (c rgb) mul(s float64) rgb { return rgb{c[0] * s, c[1] * s, c[2] * s} }
