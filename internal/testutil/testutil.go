// Package testutil holds what the tests of several packages share: reading
// the committed image fixtures. It is imported by tests only, and imports
// only package planar of ours, so any package above planar can use it.
package testutil

import (
	"image"
	"image/png"
	"os"
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
