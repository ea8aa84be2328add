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
