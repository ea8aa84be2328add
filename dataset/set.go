package dataset

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"

	"github.com/parallaxdepth/parallax/depth"
)

// PairFiles is one stereo pair of a Set: the paths of its files and its
// stored size.
type PairFiles struct {
	// Name is the file name without extension, shared by both views.
	Name string
	// Left and Right are the image paths.
	Left, Right string
	// Width and Height are the stored image size.
	Width, Height int
	// Truth maps a truth kind to its file; kinds the set lacks are absent.
	Truth map[Kind]string
	// Rig is the pair's rig at the stored size: the set's rig (Set.Rig)
	// or the pair's own (DIR/rigs/NAME.json), or nil if the set has none.
	// Pairs of one set may share the pointer: do not modify it.
	Rig *depth.Rig
}

// Set is a data set: pairs sorted by name, the truth kinds they all have
// and the rig, read from a folder (Open) or given as files (FromFiles).
type Set struct {
	// Dir is the folder, or "" for a set made by FromFiles.
	Dir string
	// Rig is the rig every pair shares, at the stored size (DIR/rig.json,
	// or the rig file given to FromFiles rescaled to the images), or nil if
	// there is none or the pairs have a rig each (DIR/rigs/NAME.json). Each
	// pair's rig, whichever the layout, is PairFiles.Rig.
	Rig *depth.Rig
	// Pairs, sorted by Name.
	Pairs []PairFiles
	// Truth lists the truth kinds every pair has, in the order DispLeft,
	// DispRight, DepthLeft, OccLeft, OccRight.
	Truth []Kind
}

// Has reports whether every pair of s has ground truth of kind k.
func (s *Set) Has(k Kind) bool { return slices.Contains(s.Truth, k) }

// HasRig reports whether every pair of s has a rig (PairFiles.Rig), from
// a set-wide rig.json or from rigs/NAME.json.
func (s *Set) HasRig() bool {
	if len(s.Pairs) == 0 {
		return false
	}
	for i := range s.Pairs {
		if s.Pairs[i].Rig == nil {
			return false
		}
	}
	return true
}

// maxListed bounds the names quoted in one error message.
const maxListed = 10

// Open scans dir (see the package documentation for the layout) and reads
// the header of every image to check sizes, and the rigs. It returns an
// error naming the files if an image lacks its partner, sizes disagree, a
// header is corrupt or too large, a truth folder is incomplete, a rig file
// is invalid or for another size, the folder holds both rig.json and
// rigs/, or rigs/ lacks a pair's rig or holds one of no pair.
func Open(dir string) (*Set, error) {
	s := &Set{Dir: dir}
	left, err := listStems(dir, leftDir, imageExts...)
	if err != nil {
		return nil, err
	}
	right, err := listStems(dir, rightDir, imageExts...)
	if err != nil {
		return nil, err
	}
	var problems []string
	for name, p := range left {
		if _, ok := right[name]; !ok {
			problems = append(problems, fmt.Sprintf("%s has no partner in %s/", rel(dir, p), rightDir))
		}
	}
	for name, p := range right {
		if _, ok := left[name]; !ok {
			problems = append(problems, fmt.Sprintf("%s has no partner in %s/", rel(dir, p), leftDir))
		}
	}
	if err := report("unpaired images", problems); err != nil {
		return nil, err
	}
	if len(left) == 0 {
		return nil, fmt.Errorf("dataset: %s holds no images", filepath.Join(dir, leftDir))
	}
	for _, name := range sortedKeys(left) {
		s.Pairs = append(s.Pairs, PairFiles{Name: name, Left: left[name], Right: right[name]})
	}
	for i := range s.Pairs {
		p := &s.Pairs[i]
		if p.Width, p.Height, err = pairSize(dir, p.Name, p.Left, p.Right); err != nil {
			problems = append(problems, err.Error())
		}
	}
	if err := report("unreadable or mismatched images", problems); err != nil {
		return nil, err
	}

	for _, k := range kinds {
		files, err := listStems(filepath.Join(dir, truthDir), string(k), k.ext())
		if errors.Is(err, fs.ErrNotExist) {
			continue
		}
		if err != nil {
			return nil, err
		}
		for _, p := range s.Pairs {
			if _, ok := files[p.Name]; !ok {
				problems = append(problems, fmt.Sprintf("pair %q has no %s", p.Name, k.Path(p.Name)))
			}
		}
		for _, name := range sortedKeys(files) {
			if _, ok := left[name]; !ok {
				problems = append(problems, fmt.Sprintf("%s belongs to no pair", rel(dir, files[name])))
			}
		}
		for i := range s.Pairs {
			if s.Pairs[i].Truth == nil {
				s.Pairs[i].Truth = map[Kind]string{}
			}
			s.Pairs[i].Truth[k] = files[s.Pairs[i].Name]
		}
		s.Truth = append(s.Truth, k)
	}
	if err := report("incomplete ground truth", problems); err != nil {
		return nil, err
	}

	if err := s.readRigs(dir, left); err != nil {
		return nil, err
	}
	return s, nil
}

// FromFiles returns a set of one pair made of the given files, as if they
// were laid out in a folder: the images left and right, truth (may be nil)
// mapping kinds to files, and rigPath, a rig JSON file for the cameras at
// any size ("" for none), which is rescaled to the images' size with
// depth.Rig.Scaled. The pair's name is the left file's name without
// extension. It returns an error, naming the file, if an image cannot be
// read or is too large, the sizes differ, a truth file does not exist or its
// kind is unknown, the rig is invalid, or the rig is for images of another
// aspect ratio (see depth.Rig.CheckAspect).
func FromFiles(left, right string, truth map[Kind]string, rigPath string) (*Set, error) {
	name := strings.TrimSuffix(filepath.Base(left), filepath.Ext(left))
	p := PairFiles{Name: name, Left: left, Right: right}
	var err error
	if p.Width, p.Height, err = pairSize("", name, left, right); err != nil {
		return nil, fmt.Errorf("dataset: %w", err)
	}
	s := &Set{Pairs: []PairFiles{p}}
	for _, k := range kinds {
		path, ok := truth[k]
		if !ok {
			continue
		}
		if _, err := os.Stat(path); err != nil {
			return nil, fmt.Errorf("dataset: %s truth: %w", k, err)
		}
		if s.Pairs[0].Truth == nil {
			s.Pairs[0].Truth = map[Kind]string{}
		}
		s.Pairs[0].Truth[k] = path
		s.Truth = append(s.Truth, k)
	}
	for k := range truth {
		if err := k.check(); err != nil {
			return nil, err
		}
	}
	if rigPath != "" {
		rig, err := depth.LoadRig(rigPath)
		if err != nil {
			return nil, fmt.Errorf("dataset: %w", err)
		}
		if s.Rig, err = rig.Scaled(p.Width, p.Height); err != nil {
			return nil, fmt.Errorf("dataset: %s and %s: %w", left, rigPath, err)
		}
		s.Pairs[0].Rig = s.Rig
	}
	return s, nil
}

// readRigs reads the rigs of the set in dir, whose left images are left
// (stems to paths): DIR/rig.json for every pair, or DIR/rigs/NAME.json for
// each, never both, and each for its pair's stored size.
func (s *Set) readRigs(dir string, left map[string]string) error {
	rigPath := filepath.Join(dir, RigFile)
	_, err := os.Stat(rigPath)
	hasFile := err == nil
	files, err := listStems(dir, RigsDir, rigExt)
	hasDir := !errors.Is(err, fs.ErrNotExist)
	if hasDir && err != nil {
		return err
	}
	switch {
	case hasFile && hasDir:
		return fmt.Errorf("dataset: %s holds both %s (one rig for every pair) and %s/ (a rig for each pair); keep one", dir, RigFile, RigsDir)
	case hasFile:
		rig, err := depth.LoadRig(rigPath)
		if err != nil {
			return fmt.Errorf("dataset: %w", err)
		}
		for i := range s.Pairs {
			p := &s.Pairs[i]
			if p.Width != rig.Width || p.Height != rig.Height {
				return fmt.Errorf("dataset: %s describes %d×%d images but %s is %d×%d", rigPath, rig.Width, rig.Height, rel(dir, p.Left), p.Width, p.Height)
			}
			p.Rig = rig
		}
		s.Rig = rig
	case hasDir:
		var problems []string
		for i := range s.Pairs {
			p := &s.Pairs[i]
			path, ok := files[p.Name]
			if !ok {
				problems = append(problems, fmt.Sprintf("pair %q has no %s", p.Name, filepath.Join(RigsDir, p.Name+rigExt)))
				continue
			}
			rig, err := depth.LoadRig(path)
			if err != nil {
				problems = append(problems, err.Error())
				continue
			}
			if p.Width != rig.Width || p.Height != rig.Height {
				problems = append(problems, fmt.Sprintf("%s describes %d×%d images but %s is %d×%d", rel(dir, path), rig.Width, rig.Height, rel(dir, p.Left), p.Width, p.Height))
				continue
			}
			p.Rig = rig
		}
		for _, name := range sortedKeys(files) {
			if _, ok := left[name]; !ok {
				problems = append(problems, fmt.Sprintf("%s belongs to no pair", rel(dir, files[name])))
			}
		}
		return report("problems with the pairs' rigs in "+RigsDir+"/", problems)
	}
	return nil
}

// pairSize reads the sizes of a pair's images from their headers and
// returns an error (without the package prefix, to be listed) if one cannot
// be read or the two differ. dir shortens the names in the message.
func pairSize(dir, name, left, right string) (w, h int, err error) {
	lw, lh, err := imageSize(left)
	if err != nil {
		return 0, 0, err
	}
	rw, rh, err := imageSize(right)
	if err != nil {
		return 0, 0, err
	}
	if lw != rw || lh != rh {
		return 0, 0, fmt.Errorf("pair %q: %s is %d×%d but %s is %d×%d", name, rel(dir, left), lw, lh, rel(dir, right), rw, rh)
	}
	return lw, lh, nil
}

// listStems maps the stems of the files in dir/sub with one of exts to
// their paths, with the rules of listFiles. It returns an error wrapping
// fs.ErrNotExist if the folder does not exist, and an error if two files
// share a stem.
func listStems(dir, sub string, exts ...string) (map[string]string, error) {
	d := filepath.Join(dir, sub)
	names, err := listFiles(d, exts)
	if err != nil {
		return nil, err
	}
	out := map[string]string{}
	for _, n := range names {
		stem := strings.TrimSuffix(n, filepath.Ext(n))
		if prev, dup := out[stem]; dup {
			return nil, fmt.Errorf("dataset: %s and %s have the same name", rel(dir, prev), filepath.Join(sub, n))
		}
		out[stem] = filepath.Join(d, n)
	}
	return out, nil
}

// listFiles returns the names (not paths) of the files in dir whose
// extension is one of exts in any case, in name order; folders and names
// starting with "." are skipped. It returns an error wrapping
// fs.ErrNotExist if dir does not exist.
func listFiles(dir string, exts []string) ([]string, error) {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return nil, fmt.Errorf("dataset: %w", err)
	}
	var names []string
	for _, e := range ents {
		n := e.Name()
		if e.IsDir() || strings.HasPrefix(n, ".") {
			continue
		}
		ext := filepath.Ext(n)
		if slices.ContainsFunc(exts, func(x string) bool { return strings.EqualFold(ext, x) }) {
			names = append(names, n)
		}
	}
	slices.Sort(names)
	return names, nil
}

// ImageFiles returns the names (not paths) of the PNG and JPEG files in
// dir, in name order: extensions .png, .jpg and .jpeg in any case; folders
// and names starting with "." are skipped. A folder without images gives an
// empty list and no error; an unreadable folder gives an error.
func ImageFiles(dir string) ([]string, error) { return listFiles(dir, imageExts) }

func report(what string, problems []string) error {
	if len(problems) == 0 {
		return nil
	}
	sort.Strings(problems)
	n := len(problems)
	if n > maxListed {
		problems = append(problems[:maxListed], fmt.Sprintf("and %d more", n-maxListed))
	}
	return fmt.Errorf("dataset: %d %s: %s", n, what, strings.Join(problems, "; "))
}

// rel returns path relative to dir for messages, or path itself when dir
// is "" or path is not inside it.
func rel(dir, path string) string {
	if dir == "" {
		return path
	}
	if r, err := filepath.Rel(dir, path); err == nil && !strings.HasPrefix(r, "..") {
		return r
	}
	return path
}

func sortedKeys(m map[string]string) []string {
	k := make([]string, 0, len(m))
	for s := range m {
		k = append(k, s)
	}
	sort.Strings(k)
	return k
}
