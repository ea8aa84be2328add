package model

import (
	_ "embed"
	"fmt"
)

//go:embed weights/stereo.safetensors
var defaultStereoWeights []byte

// DefaultStereo returns a fresh copy of the stereo weights embedded in this
// package (model/weights/stereo.safetensors, F16, architecture
// StereoArchName), trained by the run described in
// training/stereo/README.md; their provenance status says how far.
func DefaultStereo() (*Weights, error) {
	w, err := Decode(defaultStereoWeights)
	if err != nil {
		return nil, fmt.Errorf("%w (embedded stereo weights)", err)
	}
	return w, nil
}
