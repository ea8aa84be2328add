package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestRun(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "out")
	if err := run("storage", "default", 2, 1, dir, 32, 16, 2, 2, true); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"rig.json", "left/000001.png", "right/000000.png", "truth/disp_left/000001.pfm", "truth/occ_right/000001.png"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("missing %s: %v", f, err)
		}
	}
	varied := filepath.Join(t.TempDir(), "varied")
	if err := run("orchard", "default", 2, 1, varied, 32, 16, 2, 2, true); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"rigs/000000.json", "rigs/000001.json", "left/000001.png"} {
		if _, err := os.Stat(filepath.Join(varied, f)); err != nil {
			t.Errorf("varied: missing %s: %v", f, err)
		}
	}
	for _, c := range []struct {
		name string
		err  error
		want string
	}{
		{"no -out", run("storage", "default", 1, 1, "", 32, 16, 2, 1, true), "-out DIR is required"},
		{"bad style", run("garden", "default", 1, 1, dir, 32, 16, 2, 1, true), "unknown style"},
		{"no pairs", run("storage", "default", 0, 1, dir, 32, 16, 2, 1, true), "-n 0"},
		{"tiny", run("storage", "default", 1, 1, dir, 1, 16, 2, 1, true), "at least 2×1"},
		{"workers", run("storage", "default", 1, 1, dir, 32, 16, 2, 0, true), "-workers 0"},
		{"samples", run("storage", "default", 1, 1, dir, 32, 16, 99, 1, true), "samples"},
		{"other rig", run("greenhouse", "default", 1, 1, dir, 32, 16, 2, 1, true), "another rig"},
		{"bad variation", run("storage", "some", 1, 1, dir, 32, 16, 2, 1, true), "unknown variation"},
		{"varied into one rig", run("orchard", "default", 1, 1, dir, 32, 16, 2, 1, true), "one rig"},
	} {
		if c.err == nil || !strings.HasPrefix(c.err.Error(), "synth: ") || !strings.Contains(c.err.Error(), c.want) {
			t.Errorf("%s: error %v, want one starting with \"synth: \" that mentions %q", c.name, c.err, c.want)
		}
	}
}
