package dataset

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"github.com/parallaxdepth/parallax/depth"
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

// PairInputs expands paths into stereo pairs: a folder into the pairs of
// its left/ and right/ subfolders (Open: images of the same name, checked
// for partners and sizes), and two files in a row into one pair LEFT RIGHT
// (FromFiles, named after the left file). Each pair's outputs are named
// after PairFiles.Name. It returns an error naming the file for a path that
// does not exist, a file without the file of its other view after it, a
// folder that is not a pair folder, a name in left/ missing from right/ (or
// the reverse), views of different sizes, or two pairs of the same name. No
// paths give no pairs.
func PairInputs(paths []string) ([]PairFiles, error) {
	var out []PairFiles
	seen := map[string]string{}
	add := func(p PairFiles) error {
		if prev, dup := seen[p.Name]; dup {
			return fmt.Errorf("dataset: %s and %s would write the same output files (%s.*)", prev, p.Left, p.Name)
		}
		seen[p.Name] = p.Left
		out = append(out, p)
		return nil
	}
	for i := 0; i < len(paths); i++ {
		fi, err := os.Stat(paths[i])
		if err != nil {
			return nil, fmt.Errorf("dataset: %w", err)
		}
		var set *Set
		if fi.IsDir() {
			if _, err := os.Stat(filepath.Join(paths[i], leftDir)); err != nil {
				return nil, fmt.Errorf("dataset: folder %s is not a folder of pairs: it has no %s/ (and %s/) subfolder", paths[i], leftDir, rightDir)
			}
			set, err = Open(paths[i])
		} else if i+1 == len(paths) || isDir(paths[i+1]) {
			return nil, fmt.Errorf("dataset: %s has no right view: give the two views of each pair as LEFT RIGHT, or a folder with %s/ and %s/", paths[i], leftDir, rightDir)
		} else {
			set, err = FromFiles(paths[i], paths[i+1], nil, "")
			i++
		}
		if err != nil {
			return nil, err
		}
		for _, p := range set.Pairs {
			if err := add(p); err != nil {
				return nil, err
			}
		}
	}
	return out, nil
}

func isDir(path string) bool {
	fi, err := os.Stat(path)
	return err == nil && fi.IsDir()
}

// Inputs expands the paths of a command line into its inputs: with pairs,
// the stereo pairs of PairInputs; else the images of ImageInputs, each as a
// PairFiles with its Left path alone (Right "", no size read yet).
func Inputs(paths []string, pairs bool) ([]PairFiles, error) {
	if pairs {
		return PairInputs(paths)
	}
	ins, err := ImageInputs(paths)
	out := make([]PairFiles, len(ins))
	for i, in := range ins {
		out[i] = PairFiles{Name: in.Name, Left: in.Path}
	}
	return out, err
}

// SharedRig returns the rig every pair of pairs has (PairFiles.Rig, from
// their folders' rig.json or rigs/NAME.json), if they all have one and all
// are equal, else nil: the rig a command can use for all of them when it
// is given none.
func SharedRig(pairs []PairFiles) *depth.Rig {
	if len(pairs) == 0 || pairs[0].Rig == nil {
		return nil
	}
	for _, p := range pairs[1:] {
		if p.Rig == nil || *p.Rig != *pairs[0].Rig {
			return nil
		}
	}
	r := *pairs[0].Rig
	return &r
}
