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

// Files are the paths of the embedded weights saved by Embedded.
type Files struct {
	OneImage string // model.Default's weights
	Stereo   string // model.DefaultStereo's weights
}

// Embedded saves the embedded one-image weights and stereo weights as F16
// files into a temporary folder of t and returns their paths. It fails t
// if either cannot be written.
func Embedded(t testing.TB) Files {
	t.Helper()
	dir := t.TempDir()
	save := func(name string, load func() (*model.Weights, error)) string {
		w, err := load()
		if err != nil {
			t.Fatal(err)
		}
		path := filepath.Join(dir, name)
		if err := w.Save(path, safetensors.F16); err != nil {
			t.Fatal(err)
		}
		return path
	}
	return Files{OneImage: save("one-image.safetensors", model.Default), Stereo: save("stereo.safetensors", model.DefaultStereo)}
}
