package model

import (
	"fmt"
	"strings"
)

// LoadOrDefault returns the weights stored in path, or the embedded default
// weights (Default) when path is empty: the rule of every command's
// -weights flag.
func LoadOrDefault(path string) (*Weights, error) {
	if path == "" {
		return Default()
	}
	return Load(path)
}

// LoadKind returns the weights stored in path, or the embedded default of
// the kind asked for when path is empty: DefaultStereo if stereo, else
// Default. It returns an error naming the file and both kinds if the
// weights in path are of the other kind (see Arch.Kind): one-image weights
// cannot run on pairs, nor stereo weights on single images.
func LoadKind(path string, stereo bool) (*Weights, error) {
	if path == "" {
		if stereo {
			return DefaultStereo()
		}
		return Default()
	}
	w, err := Load(path)
	if err != nil {
		return nil, err
	}
	a, err := w.Arch()
	if err != nil {
		return nil, err
	}
	if a.IsStereo() != stereo {
		want := map[bool]string{true: KindStereo, false: KindOneImage}[stereo]
		return nil, fmt.Errorf("model: %s holds %s weights, not %s weights", path, a.Kind(), want)
	}
	return w, nil
}

// DescribeWeights names weights for a title or summary: "embedded" or the
// file path, followed by their provenance in parentheses (the status entry
// alone when there is one, else every entry as key=value in key order).
func DescribeWeights(w *Weights, path string) string {
	name := "embedded"
	if path != "" {
		name = path
	}
	if w == nil || len(w.Provenance) == 0 {
		return name
	}
	if st := w.Provenance[ProvenanceStatus]; st != "" {
		return name + " (" + st + ")"
	}
	var parts []string
	for _, k := range sortedKeys(w.Provenance) {
		parts = append(parts, fmt.Sprintf("%s=%s", k, w.Provenance[k]))
	}
	return name + " (" + strings.Join(parts, ", ") + ")"
}
