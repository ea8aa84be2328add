package atomicfile

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// Write calls write with a buffered writer on a temporary file beside path
// and, if write returns nil, replaces path with that file (see the package
// doc). The error of write is returned unchanged; a file-system error is
// returned as "PREFIX: writing PATH: ..." wrapping the os error.
func Write(path, prefix string, write func(w io.Writer) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	fail := func(e error) error { return fmt.Errorf("%s: writing %s: %w", prefix, path, e) }
	f, err := os.CreateTemp(dir, "."+base+".tmp*")
	if err != nil {
		return fail(err)
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
		return fail(err)
	}
	if err = f.Sync(); err != nil {
		return fail(err)
	}
	if err = f.Close(); err != nil {
		return fail(err)
	}
	if err = os.Chmod(tmp, 0o644); err != nil {
		return fail(err)
	}
	if err = os.Rename(tmp, path); err != nil {
		return fail(err)
	}
	// Sync the directory so the rename itself survives a crash; not every
	// file system supports it, so a failure here is not reported.
	if d, derr := os.Open(dir); derr == nil {
		d.Sync()
		d.Close()
	}
	return nil
}

// WriteBytes writes data to path like Write; every error, a full disk
// included, is "PREFIX: writing PATH: ...".
func WriteBytes(path, prefix string, data []byte) error {
	return Write(path, prefix, func(w io.Writer) error {
		if _, err := w.Write(data); err != nil {
			return fmt.Errorf("%s: writing %s: %w", prefix, path, err)
		}
		return nil
	})
}
