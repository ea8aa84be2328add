package depth

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// writeFileAtomic writes a user file so that a reader never sees it half
// written: the data goes to a temporary file in the same directory, which is
// synced and then renamed over path.
func writeFileAtomic(path string, write func(w io.Writer) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp*")
	if err != nil {
		return fmt.Errorf("depth: %w", err)
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	bw := bufio.NewWriterSize(f, 1<<16)
	if err = write(bw); err != nil {
		return err
	}
	if err = bw.Flush(); err != nil {
		return fmt.Errorf("depth: writing %s: %w", path, err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("depth: writing %s: %w", path, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("depth: writing %s: %w", path, err)
	}
	if err = os.Chmod(tmp, 0o644); err != nil {
		return fmt.Errorf("depth: writing %s: %w", path, err)
	}
	if err = os.Rename(tmp, path); err != nil {
		return fmt.Errorf("depth: writing %s: %w", path, err)
	}
	// Sync the directory so the rename itself survives a crash; not every
	// file system supports it, so a failure here is not reported.
	if d, derr := os.Open(dir); derr == nil {
		d.Sync()
		d.Close()
	}
	return nil
}
