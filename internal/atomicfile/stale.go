package atomicfile

import (
	"os"
	"path/filepath"
	"strings"
)

// tempPrefix is the name Write's temporary file for path starts with; the
// rest is os.CreateTemp's random digits.
func tempPrefix(path string) string { return "." + filepath.Base(path) + ".tmp" }

// Stale returns the temporary files that an interrupted Write to path left
// beside it (a crash or kill between creating and renaming): the files of
// path's folder named ".BASE.tmp" followed by digits only. Nothing else
// matches, so removing them cannot touch another program's files.
func Stale(path string) ([]string, error) {
	dir := filepath.Dir(path)
	ents, err := os.ReadDir(dir)
	if err != nil {
		return nil, err
	}
	prefix := tempPrefix(path)
	var out []string
	for _, e := range ents {
		rest, ok := strings.CutPrefix(e.Name(), prefix)
		if !ok || rest == "" || !e.Type().IsRegular() || strings.Trim(rest, "0123456789") != "" {
			continue
		}
		out = append(out, filepath.Join(dir, e.Name()))
	}
	return out, nil
}
