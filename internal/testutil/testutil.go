// Package testutil holds what the tests of several packages share: reading
// the committed image fixtures, comparing golden files and checking
// expected errors. It is imported by tests only, and imports only package
// planar of ours, so any package above planar can use it.
package testutil

import (
	"bytes"
	"image"
	"image/png"
	"os"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
)

// PNG decodes the PNG file at path, failing t if it cannot be read.
func PNG(t testing.TB, path string) image.Image {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return img
}

// Planar decodes the PNG file at path into a planar image (package
// planar's channels and value range), failing t if it cannot.
func Planar(t testing.TB, path string) *planar.Image {
	t.Helper()
	im, err := planar.FromImage(PNG(t, path))
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return im
}

// WantError fails t, naming the case, unless err is an error whose text
// starts with prefix (the package's or command's name, "dataset: ") and
// contains each of wants (the files, flags or values it must name).
func WantError(t testing.TB, name string, err error, prefix string, wants ...string) {
	t.Helper()
	if err == nil || !strings.HasPrefix(err.Error(), prefix) {
		t.Errorf("%s: %v, want an error starting %q", name, err, prefix)
		return
	}
	for _, w := range wants {
		if !strings.Contains(err.Error(), w) {
			t.Errorf("%s: %v\nwant it to name %q", name, err, w)
		}
	}
}

// Golden compares got with the committed file at path, failing t with
// "PATH is stale: rerun" and the hint if they differ; with update it first
// writes got to path.
func Golden(t testing.TB, path string, got []byte, update bool, rerun string) {
	t.Helper()
	if update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, want) {
		t.Fatalf("%s is stale: rerun %s", path, rerun)
	}
}
