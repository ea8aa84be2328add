package model

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// MaxFileSize bounds the size of a file that Load and LoadSafetensors read
// (the default network takes under 4 MB as F32).
const MaxFileSize = 1 << 31

// writeFileAtomic writes data to path so that a reader never sees a half
// written file: a temporary file in the same directory, synced, renamed
// over path, then the directory synced where the platform allows.
func writeFileAtomic(path string, data []byte) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp*")
	if err != nil {
		return fmt.Errorf("model: saving %s: %w", path, err)
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	if _, err = f.Write(data); err != nil {
		return fmt.Errorf("model: saving %s: %w", path, err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("model: saving %s: %w", path, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("model: saving %s: %w", path, err)
	}
	if err = os.Chmod(tmp, 0o644); err != nil {
		return fmt.Errorf("model: saving %s: %w", path, err)
	}
	if err = os.Rename(tmp, path); err != nil {
		return fmt.Errorf("model: saving %s: %w", path, err)
	}
	if d, derr := os.Open(dir); derr == nil {
		d.Sync() // makes the rename durable; not every platform supports it
		d.Close()
	}
	return nil
}

// readFileLimited reads the file at path, refusing one larger than
// MaxFileSize before reading it.
func readFileLimited(path string) ([]byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	if st.Size() > MaxFileSize {
		return nil, fmt.Errorf("model: %s has %d bytes, more than the limit of %d", path, st.Size(), int64(MaxFileSize))
	}
	// Read at most one byte more than the size seen, in case the file grows.
	b, err := io.ReadAll(io.LimitReader(f, st.Size()+1))
	if err != nil {
		return nil, fmt.Errorf("model: reading %s: %w", path, err)
	}
	if int64(len(b)) > MaxFileSize {
		return nil, fmt.Errorf("model: %s grew beyond %d bytes while being read", path, int64(MaxFileSize))
	}
	return b, nil
}
