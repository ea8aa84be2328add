package model

import (
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/safetensors"
)

// TestLoadOrDefault: "" is the embedded weights, a path is that file, a
// missing file an error naming it.
func TestLoadOrDefault(t *testing.T) {
	def, err := LoadOrDefault("")
	if err != nil {
		t.Fatal(err)
	}
	if got := DescribeWeights(def, ""); got != "embedded ("+def.Provenance[ProvenanceStatus]+")" || def.Provenance[ProvenanceStatus] == "" {
		t.Errorf("embedded described as %q", got)
	}
	p := filepath.Join(t.TempDir(), "w.safetensors")
	def.Provenance = map[string]string{"train.data": "d", "train.lr": "0.001"}
	if err := def.Save(p, safetensors.F16); err != nil {
		t.Fatal(err)
	}
	w, err := LoadOrDefault(p)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := DescribeWeights(w, p), p+" (train.data=d, train.lr=0.001)"; got != want {
		t.Errorf("file described as %q, want %q", got, want)
	}
	if _, err := LoadOrDefault(p + ".missing"); err == nil {
		t.Error("missing file loaded")
	}
}
