package synth

import "math"

// scene is a procedurally built world with its lighting and the pose of the
// left camera. The right camera sits Baseline metres along the left
// camera's x axis (right), with the same orientation: the pair is rectified.
type scene struct {
	shapes []shape
	mats   []material

	light   vec3    // unit vector towards a distant light
	ambient float64 // light reaching every surface
	diffuse float64 // strength of the directional light

	origin           vec3 // left camera centre, world frame
	right, down, fwd vec3 // camera axes in the world frame (orthonormal)
}

// setPose places the left camera at origin looking along the direction
// given by yaw (about world Y, positive turns right) and pitch (positive
// looks up), with no roll, so that image rows stay horizontal.
func (sc *scene) setPose(origin vec3, yaw, pitch float64) {
	sc.origin = origin
	cy, sy := math.Cos(yaw), math.Sin(yaw)
	cp, sp := math.Cos(pitch), math.Sin(pitch)
	sc.fwd = vec3{sy * cp, sp, cy * cp}
	sc.right = vec3{cy, 0, -sy}
	sc.down = sc.right.cross(sc.fwd)
}
