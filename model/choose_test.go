package model

import (
	"path/filepath"
	"strings"
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

// TestLoadKind: "" is the embedded default of the kind asked for; a file
// of the other kind is an error naming the file and both kinds.
func TestLoadKind(t *testing.T) {
	dir := t.TempDir()
	files := map[bool]string{}
	for _, stereo := range []bool{false, true} {
		w, err := LoadKind("", stereo)
		if err != nil {
			t.Fatal(err)
		}
		if a, err := w.Arch(); err != nil || a.IsStereo() != stereo {
			t.Fatalf("LoadKind(\"\", %v): %v, stereo %v", stereo, err, a != nil && a.IsStereo())
		}
		files[stereo] = filepath.Join(dir, map[bool]string{true: "stereo", false: "mono"}[stereo]+".safetensors")
		if err := w.Save(files[stereo], safetensors.F16); err != nil {
			t.Fatal(err)
		}
	}
	for _, c := range []struct {
		path   string
		stereo bool
		want   string // "" for no error
	}{
		{files[false], false, ""},
		{files[true], true, ""},
		{files[false], true, "holds one-image weights, not stereo weights"},
		{files[true], false, "holds stereo weights, not one-image weights"},
		{files[true] + ".missing", true, ".missing"},
	} {
		_, err := LoadKind(c.path, c.stereo)
		if c.want == "" && err != nil || c.want != "" && (err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), c.path)) {
			t.Errorf("LoadKind(%s, %v): %v, want %q", c.path, c.stereo, err, c.want)
		}
	}
}
