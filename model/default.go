package model

import (
	_ "embed"
	"fmt"
)

//go:embed weights/default.safetensors
var defaultWeights []byte

// ProvenanceStatus is the provenance key that says what state weights are
// in (how far trained, from which run); programs show it beside the
// weights' name.
const ProvenanceStatus = "status"

// Default returns a fresh copy of the weights embedded in this package
// (model/weights/default.safetensors, F16), trained by the run described
// in training/default/README.md; their provenance says how far.
func Default() (*Weights, error) {
	w, err := Decode(defaultWeights)
	if err != nil {
		return nil, fmt.Errorf("%w (embedded default weights)", err)
	}
	return w, nil
}
