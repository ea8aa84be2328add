package dataset

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
)

// ImageInput is one image named on a command line: its path and the name
// (the file name without extension) that its outputs are named after.
type ImageInput struct{ Name, Path string }

// ImageInputs expands paths into images: a file as given, a folder into
// its PNG and JPEG files in name order (ImageFiles). It is an error if a
// path does not exist, if a folder holds no image, or if two images have
// the same name, since their outputs would overwrite each other. No paths
// give no inputs.
func ImageInputs(paths []string) ([]ImageInput, error) {
	var out []ImageInput
	seen := map[string]string{}
	add := func(path string) error {
		name := strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
		if prev, dup := seen[name]; dup {
			return fmt.Errorf("dataset: %s and %s would write the same output files (%s.*)", prev, path, name)
		}
		seen[name] = path
		out = append(out, ImageInput{Name: name, Path: path})
		return nil
	}
	for _, p := range paths {
		fi, err := os.Stat(p)
		if err != nil {
			return nil, fmt.Errorf("dataset: %w", err)
		}
		if !fi.IsDir() {
			if err := add(p); err != nil {
				return nil, err
			}
			continue
		}
		names, err := ImageFiles(p)
		if err != nil {
			return nil, err
		}
		if len(names) == 0 {
			return nil, fmt.Errorf("dataset: folder %s holds no PNG or JPEG image", p)
		}
		for _, n := range names {
			if err := add(filepath.Join(p, n)); err != nil {
				return nil, err
			}
		}
	}
	return out, nil
}
