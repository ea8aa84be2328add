package main

import (
	"bytes"
	"context"
	"image/png"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/model/demo"
)

func runArgs(args ...string) (stdout, stderr string, err error) {
	var o, e bytes.Buffer
	err = run(context.Background(), args, &o, &e)
	return o.String(), e.String(), err
}

// nearest returns the metres of a line "NAME: nearest point ahead X m ...".
func nearest(t *testing.T, line string) (string, float64) {
	t.Helper()
	name, rest, ok := strings.Cut(line, ": nearest point ahead ")
	f := strings.Fields(rest)
	if !ok || len(f) < 2 || f[1] != "m" {
		t.Fatalf("line %q", line)
	}
	v, err := strconv.ParseFloat(f[0], 64)
	if err != nil {
		t.Fatalf("line %q: %v", line, err)
	}
	return name, v
}

// TestFolder: the demo image read from a folder (twice, under two names)
// gives the same nearest point as the built-in demo frame, one line per
// image in name order, within the demo rig's depth range.
func TestFolder(t *testing.T) {
	stdout, _, err := runArgs()
	if err != nil {
		t.Fatal(err)
	}
	name, want := nearest(t, strings.TrimSpace(stdout))
	if name != demo.Name {
		t.Errorf("demo frame named %q, want %q", name, demo.Name)
	}
	rig, err := demo.Rig()
	if err != nil {
		t.Fatal(err)
	}
	if want < rig.MinDepth || want > rig.MaxDepth {
		t.Errorf("nearest %v m outside the rig's %v…%v m", want, rig.MinDepth, rig.MaxDepth)
	}
	img, err := demo.Left()
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	for _, n := range []string{"b.png", "a.png"} {
		f, _ := os.Create(filepath.Join(dir, n))
		if err := png.Encode(f, img); err != nil {
			t.Fatal(err)
		}
		f.Close()
	}
	stdout, _, err = runArgs(dir)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(stdout), "\n")
	if len(lines) != 2 {
		t.Fatalf("%d lines:\n%s", len(lines), stdout)
	}
	for i, wantName := range []string{"a", "b"} {
		if name, got := nearest(t, lines[i]); !strings.HasPrefix(name, wantName) || got != want {
			t.Errorf("line %d: %s %v m, want %s… %v m (the demo frame's)", i, name, got, wantName, want)
		}
	}
}

// Bad flags and arguments get errors that start with the command's name.
func TestErrors(t *testing.T) {
	dir := t.TempDir()
	notImage := filepath.Join(dir, "x.png")
	os.WriteFile(notImage, []byte("not a PNG"), 0o644)
	for _, c := range []struct {
		name string
		args []string
		want string
	}{
		{"unknown flag", []string{"-colour", "red"}, "flag provided but not defined: -colour"},
		{"two folders", []string{dir, dir}, "one folder at most"},
		{"missing rig", []string{"-rig", filepath.Join(dir, "none.json")}, "none.json"},
		{"bad weights", []string{"-weights", notImage}, "x.png"},
		{"missing folder", []string{filepath.Join(dir, "nowhere")}, "nowhere"},
		{"undecodable image", []string{dir}, "x.png"},
	} {
		_, _, err := runArgs(c.args...)
		if err == nil || !strings.HasPrefix(err.Error(), "embed: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want an error starting with \"embed: \" that mentions %q", c.name, err, c.want)
		}
	}
	if _, stderr, err := runArgs("-help"); err != nil || !strings.Contains(stderr, "usage: embed") {
		t.Errorf("-help: %v, stderr %q", err, stderr)
	}
}
