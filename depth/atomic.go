package depth

import (
	"io"

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
