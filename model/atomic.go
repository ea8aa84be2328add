package model

import (
	"fmt"
	"io"
	"os"

	"github.com/parallaxdepth/parallax/internal/atomicfile"
)

// MaxFileSize bounds the size of a file that Load and LoadSafetensors read
// (the default network takes under 4 MB as F32).
const MaxFileSize = 1 << 31

// writeFileAtomic writes data to path so that a reader never sees a half
// written file (see package internal/atomicfile); errors read
// "model: writing PATH: ...".
func writeFileAtomic(path string, data []byte) error {
	return atomicfile.WriteBytes(path, "model", data)
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
