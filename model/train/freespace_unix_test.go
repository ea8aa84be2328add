//go:build unix

package train

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/sys/unix"

	"github.com/parallaxdepth/parallax/internal/atomicfile"
)

// TestCheckpointDiskFull fills the disk during a checkpoint write (a write
// hook that fails with ENOSPC halfway, as write(2) does on a full file
// system): the error wraps ErrNoSpace and ENOSPC and gives the free space
// and the checkpoint's size, the previous checkpoint is left as it was and
// no temporary file stays.
func TestCheckpointDiskFull(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "w.safetensors.ckpt")
	c := testCheckpoint(t)
	if err := SaveCheckpoint(path, c); err != nil {
		t.Fatal(err)
	}
	old, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	defer func(w func(string, string, []byte) error) { writeBytes = w }(writeBytes)
	var size int
	writeBytes = func(path, prefix string, data []byte) error {
		size = len(data)
		return atomicfile.Write(path, prefix, func(w io.Writer) error {
			w.Write(data[:len(data)/2])
			return fmt.Errorf("%s: writing %s: %w", prefix, path, &os.PathError{Op: "write", Path: path + ".tmp1", Err: unix.ENOSPC})
		})
	}
	c.Step++
	err = SaveCheckpoint(path, c)
	if !errors.Is(err, ErrNoSpace) || !errors.Is(err, unix.ENOSPC) {
		t.Fatalf("error %v, want one wrapping ErrNoSpace and ENOSPC", err)
	}
	free, ok := freeBytes(dir)
	for _, want := range []string{"MB free", mb(int64(size)) + " needed", "w.safetensors.ckpt", dir} {
		if ok && !strings.Contains(err.Error(), want) {
			t.Errorf("error %q does not give %q", err, want)
		}
	}
	t.Logf("%v (free %d bytes)", err, free)
	if b, _ := os.ReadFile(path); !bytes.Equal(b, old) {
		t.Error("the previous checkpoint changed")
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Errorf("%d files in the folder, want the checkpoint alone", len(ents))
	}
	// Another failure is returned as it was.
	other := errors.New("train: checkpoint: boom")
	writeBytes = func(string, string, []byte) error { return other }
	if err := SaveCheckpoint(path, c); err != other {
		t.Errorf("other error: %v", err)
	}
}
