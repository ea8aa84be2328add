// Package weightfiles gives the commands' tests the embedded weights as
// files, for the flags that take a weights file (-weights). It is imported
// by tests only, and lives apart from package testutil, which model's own
// tests import, because it imports model.
package weightfiles

import (
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/safetensors"
)

// Embedded saves the embedded one-image weights and stereo weights as F16
// files into a temporary folder of t and returns their paths, by kind
// (false: one-image, true: stereo). It fails t if either cannot be written.
func Embedded(t testing.TB) map[bool]string {
	t.Helper()
	dir := t.TempDir()
	files := map[bool]string{}
	for _, stereo := range []bool{false, true} {
		w, err := model.LoadKind("", stereo)
		if err != nil {
			t.Fatal(err)
		}
		files[stereo] = filepath.Join(dir, map[bool]string{true: "stereo", false: "mono"}[stereo]+".safetensors")
		if err := w.Save(files[stereo], safetensors.F16); err != nil {
			t.Fatal(err)
		}
	}
	return files
}
