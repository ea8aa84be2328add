package dataset

import (
	"os"
	"path/filepath"
	"testing"
)

// writePairRigs writes a set of the pairs names with a rig each (focal
// length 100 + 10 i px for pair i) and returns its folder.
func writePairRigs(t *testing.T, f fixture, names ...string) string {
	t.Helper()
	dir := writeSet(t, f, names...)
	for i, n := range names {
		rig := testRig(f.w, f.h)
		rig.Fx = 100 + 10*float64(i)
		if err := WritePairRig(dir, n, rig); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// TestOpenPairRigs: a set whose pairs have a rig each (rigs/NAME.json, as
// synth's varied styles write it) gives every pair its own rig, in
// PairFiles and in the Record, and no set-wide rig.
func TestOpenPairRigs(t *testing.T) {
	f := fixture{w: 32, h: 16, truth: true}
	dir := writePairRigs(t, f, "a", "b")
	ds, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	if ds.Rig != nil || !ds.HasRig() {
		t.Fatalf("set rig %+v, HasRig %v: want nil and true", ds.Rig, ds.HasRig())
	}
	for i, p := range ds.Pairs {
		want := testRig(f.w, f.h)
		want.Fx = 100 + 10*float64(i)
		if p.Rig == nil || *p.Rig != *want {
			t.Errorf("pair %s: rig %+v, want %+v", p.Name, p.Rig, want)
		}
		r, err := ds.Read(i)
		if err != nil {
			t.Fatal(err)
		}
		if r.Rig == nil || *r.Rig != *want || r.Rig == p.Rig {
			t.Errorf("record %s: rig %+v, want a copy of %+v", r.Name, r.Rig, want)
		}
	}
	// The set-wide layout fills every pair's rig with the set's.
	one, err := Open(writeSet(t, fixture{w: 32, h: 16, rig: true}, "a", "b"))
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range one.Pairs {
		if p.Rig == nil || *p.Rig != *one.Rig {
			t.Errorf("one-rig set, pair %s: rig %+v, want the set's %+v", p.Name, p.Rig, one.Rig)
		}
	}
	if none, err := Open(writeSet(t, f, "a")); err != nil || none.HasRig() || none.Pairs[0].Rig != nil {
		t.Errorf("set without rig: %v, HasRig %v", err, none.HasRig())
	}
}

// TestOpenPairRigsRefused: both layouts at once, a pair without its rig, a
// rig of no pair, a rig of another size and an invalid rig file are
// errors naming the file; Create and WritePairRig refuse to mix layouts.
func TestOpenPairRigsRefused(t *testing.T) {
	f := fixture{w: 32, h: 16}

	dir := writePairRigs(t, f, "a", "b")
	if err := os.WriteFile(filepath.Join(dir, RigFile), []byte("{}"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Open(dir)
	wantErr(t, err, "both", RigFile, RigsDir+"/")

	dir = writePairRigs(t, f, "a", "b", "c")
	os.Remove(filepath.Join(dir, RigsDir, "b.json"))
	_, err = Open(dir)
	wantErr(t, err, `pair "b" has no rigs/b.json`)

	dir = writePairRigs(t, f, "a")
	if err := WritePairRig(dir, "z", testRig(f.w, f.h)); err != nil {
		t.Fatal(err)
	}
	_, err = Open(dir)
	wantErr(t, err, "rigs/z.json belongs to no pair")

	dir = writePairRigs(t, f, "a", "b")
	if err := WritePairRig(dir, "b", testRig(64, 32)); err != nil {
		t.Fatal(err)
	}
	_, err = Open(dir)
	wantErr(t, err, "rigs/b.json describes 64×32 images but left/b.png is 32×16")

	dir = writePairRigs(t, f, "a")
	os.WriteFile(filepath.Join(dir, RigsDir, "a.json"), []byte(`{"width_px": 32}`), 0o644)
	_, err = Open(dir)
	wantErr(t, err, "a.json")

	dir = writePairRigs(t, f, "a")
	wantErr(t, Create(dir, testRig(f.w, f.h)), RigsDir+"/")
	one := writeSet(t, fixture{w: 32, h: 16, rig: true}, "a")
	wantErr(t, WritePairRig(one, "a", testRig(f.w, f.h)), RigFile)
	wantErr(t, WritePairRig(t.TempDir(), "../a", testRig(f.w, f.h)), "plain file name")
}
