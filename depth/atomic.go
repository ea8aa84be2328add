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
