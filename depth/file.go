package depth

import (
	"fmt"
	"io"
	"os"

	"github.com/parallaxdepth/parallax/internal/atomicfile"
)

// writeFileAtomic writes a user file so that a reader never sees it half
// written (see package internal/atomicfile): errors of write come back
// unchanged, file-system errors as "depth: writing PATH: ...".
func writeFileAtomic(path string, write func(w io.Writer) error) error {
	return atomicfile.Write(path, "depth", write)
}

// SaveFile writes data to path atomically, the way every Save function of
// this package writes: into a temporary file beside path that then replaces
// it, so a reader never sees a half-written file and a crash leaves the old
// file. File-system errors come back as "depth: writing PATH: ...".
func SaveFile(path string, data []byte) error {
	return writeFileAtomic(path, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// loadFile opens path and reads it with read, the way every Load function
// of this package reads: an error opening comes back as "depth: ...", one of
// read with " (in PATH)" added, and then the zero T.
func loadFile[T any](path string, read func(r io.Reader) (T, error)) (T, error) {
	var zero T
	f, err := os.Open(path)
	if err != nil {
		return zero, fmt.Errorf("depth: %w", err)
	}
	defer f.Close()
	v, err := read(f)
	if err != nil {
		return zero, fmt.Errorf("%w (in %s)", err, path)
	}
	return v, nil
}
