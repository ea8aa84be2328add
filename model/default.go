package model

import (
	_ "embed"
	"fmt"
)

//go:embed weights/default.safetensors
var defaultWeights []byte

// Provenance keys and the value that marks the untrained placeholder.
const (
	// ProvenanceStatus is the provenance key that says what state the
	// weights are in.
	ProvenanceStatus = "status"
	// StatusPlaceholder is the ProvenanceStatus of weights that were never
	// trained: a deterministic fresh initialisation that lets every
	// command run end to end. Their output is meaningless.
	StatusPlaceholder = "untrained placeholder"
	// PlaceholderSeed is the seed of NewWeights that made the placeholder.
	PlaceholderSeed = 1
)

// Default returns a fresh copy of the weights embedded in this package
// (model/weights/default.safetensors, fp16). Until the project's trained
// weights are committed, they are an untrained placeholder; see
// IsPlaceholder.
func Default() (*Weights, error) {
	w, err := Decode(defaultWeights)
	if err != nil {
		return nil, fmt.Errorf("%w (embedded default weights)", err)
	}
	return w, nil
}

// IsPlaceholder reports whether w is marked as the untrained placeholder in
// its provenance. Programs should warn loudly when it is true.
func (w *Weights) IsPlaceholder() bool {
	return w != nil && w.Provenance[ProvenanceStatus] == StatusPlaceholder
}
