package data

import (
	"errors"
	"fmt"
	"image"
	_ "image/jpeg" // register the JPEG decoder
	_ "image/png"  // register the PNG decoder
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"github.com/parallaxdepth/parallax/depth"
)

// Truth kinds: the sub-folders of DIR/truth and their file extensions.
const (
	DispLeft  = "disp_left"
	DispRight = "disp_right"
	DepthLeft = "depth_left"
	OccLeft   = "occ_left"
	OccRight  = "occ_right"
)

var truthKinds = []struct{ dir, ext string }{
	{DispLeft, ".pfm"}, {DispRight, ".pfm"}, {DepthLeft, ".pfm"}, {OccLeft, ".png"}, {OccRight, ".png"},
}

// Pair is one stereo pair of a Dataset: the paths of its files.
type Pair struct {
	// Name is the file name without extension, shared by both views.
	Name string
	// Left and Right are the image paths.
	Left, Right string
	// Width and Height are the stored image size.
	Width, Height int
	// Truth maps a truth kind (DispLeft, ...) to its file; kinds the
	// dataset lacks are absent.
	Truth map[string]string
}

// Dataset is a folder of pairs, sorted by name.
type Dataset struct {
	// Dir is the folder.
	Dir string
	// Rig is the rig read from DIR/rig.json, or nil if there is none. It
	// describes the stored image size; Rig.Scaled gives the rig at the
	// loader's size.
	Rig *depth.Rig
	// Pairs, sorted by Name.
	Pairs []Pair
	// Truth lists the truth kinds every pair has.
	Truth []string
}

// maxListed bounds the names quoted in one error message.
const maxListed = 10

// Open scans dir (see the package documentation for the layout) and reads
// the header of every image to check sizes. It returns an error naming the
// files if an image lacks its partner, sizes disagree, a header is corrupt,
// a truth folder is incomplete, or rig.json is invalid or for another size.
func Open(dir string) (*Dataset, error) {
	ds := &Dataset{Dir: dir}
	left, err := listImages(dir, "left", ".png", ".jpg", ".jpeg")
	if err != nil {
		return nil, err
	}
	right, err := listImages(dir, "right", ".png", ".jpg", ".jpeg")
	if err != nil {
		return nil, err
	}
	var problems []string
	for name, p := range left {
		if _, ok := right[name]; !ok {
			problems = append(problems, fmt.Sprintf("%s has no partner in right/", rel(dir, p)))
		}
	}
	for name, p := range right {
		if _, ok := left[name]; !ok {
			problems = append(problems, fmt.Sprintf("%s has no partner in left/", rel(dir, p)))
		}
	}
	if err := report("unpaired images", problems); err != nil {
		return nil, err
	}
	if len(left) == 0 {
		return nil, fmt.Errorf("data: %s holds no images", filepath.Join(dir, "left"))
	}

	for _, name := range sortedKeys(left) {
		ds.Pairs = append(ds.Pairs, Pair{Name: name, Left: left[name], Right: right[name]})
	}
	for i := range ds.Pairs {
		p := &ds.Pairs[i]
		lw, lh, err := imageSize(dir, p.Left)
		if err != nil {
			return nil, err
		}
		rw, rh, err := imageSize(dir, p.Right)
		if err != nil {
			return nil, err
		}
		if lw != rw || lh != rh {
			problems = append(problems, fmt.Sprintf("pair %q: %s is %d×%d but %s is %d×%d", p.Name, rel(dir, p.Left), lw, lh, rel(dir, p.Right), rw, rh))
		}
		p.Width, p.Height = lw, lh
	}
	if err := report("mismatched sizes", problems); err != nil {
		return nil, err
	}

	for _, k := range truthKinds {
		files, err := listImages(filepath.Join(dir, "truth"), k.dir, k.ext)
		if errors.Is(err, fs.ErrNotExist) {
			continue
		}
		if err != nil {
			return nil, err
		}
		for _, p := range ds.Pairs {
			if _, ok := files[p.Name]; !ok {
				problems = append(problems, fmt.Sprintf("pair %q has no truth/%s/%s%s", p.Name, k.dir, p.Name, k.ext))
			}
		}
		for _, name := range sortedKeys(files) {
			if _, ok := left[name]; !ok {
				problems = append(problems, fmt.Sprintf("%s belongs to no pair", rel(dir, files[name])))
			}
		}
		for i := range ds.Pairs {
			if ds.Pairs[i].Truth == nil {
				ds.Pairs[i].Truth = map[string]string{}
			}
			ds.Pairs[i].Truth[k.dir] = files[ds.Pairs[i].Name]
		}
		ds.Truth = append(ds.Truth, k.dir)
	}
	if err := report("incomplete ground truth", problems); err != nil {
		return nil, err
	}

	rigPath := filepath.Join(dir, "rig.json")
	if _, err := os.Stat(rigPath); err == nil {
		rig, err := depth.LoadRig(rigPath)
		if err != nil {
			return nil, fmt.Errorf("data: %w", err)
		}
		for _, p := range ds.Pairs {
			if p.Width != rig.Width || p.Height != rig.Height {
				return nil, fmt.Errorf("data: rig.json describes %d×%d images but %s is %d×%d", rig.Width, rig.Height, rel(dir, p.Left), p.Width, p.Height)
			}
		}
		ds.Rig = rig
	}
	return ds, nil
}

// listImages maps the stems of the files in dir/sub with one of exts
// (case-insensitive) to their paths. It returns an error wrapping
// fs.ErrNotExist if the folder does not exist, and an error if two files
// share a stem.
func listImages(dir, sub string, exts ...string) (map[string]string, error) {
	d := filepath.Join(dir, sub)
	ents, err := os.ReadDir(d)
	if err != nil {
		return nil, fmt.Errorf("data: %w", err)
	}
	out := map[string]string{}
	for _, e := range ents {
		n := e.Name()
		if strings.HasPrefix(n, ".") || e.IsDir() {
			continue
		}
		ext := filepath.Ext(n)
		ok := false
		for _, x := range exts {
			ok = ok || strings.EqualFold(ext, x)
		}
		if !ok {
			continue
		}
		stem := strings.TrimSuffix(n, ext)
		if prev, dup := out[stem]; dup {
			return nil, fmt.Errorf("data: %s and %s have the same name", rel(dir, prev), filepath.Join(sub, n))
		}
		out[stem] = filepath.Join(d, n)
	}
	return out, nil
}

func imageSize(dir, path string) (w, h int, err error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, 0, fmt.Errorf("data: %w", err)
	}
	defer f.Close()
	c, _, err := image.DecodeConfig(f)
	if err != nil {
		return 0, 0, fmt.Errorf("data: %s: %v", rel(dir, path), err)
	}
	if c.Width <= 0 || c.Height <= 0 || c.Width > depth.MaxSide || c.Height > depth.MaxSide || c.Width*c.Height > depth.MaxPixels {
		return 0, 0, fmt.Errorf("data: %s: image size %d×%d is out of range", rel(dir, path), c.Width, c.Height)
	}
	return c.Width, c.Height, nil
}

func report(what string, problems []string) error {
	if len(problems) == 0 {
		return nil
	}
	sort.Strings(problems)
	n := len(problems)
	if n > maxListed {
		problems = append(problems[:maxListed], fmt.Sprintf("and %d more", n-maxListed))
	}
	return fmt.Errorf("data: %d %s: %s", n, what, strings.Join(problems, "; "))
}

func rel(dir, path string) string {
	if r, err := filepath.Rel(dir, path); err == nil {
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

// Split divides d into a training and a validation set: the pairs are
// shuffled by seed and the first round(valFraction·len) go to validation,
// each set keeping name order. valFraction must be in [0, 1); a non-zero
// fraction leaves at least one pair in each set, so it returns an error for
// a dataset of one pair.
func (d *Dataset) Split(valFraction float64, seed uint64) (train, val *Dataset, err error) {
	if !(valFraction >= 0 && valFraction < 1) {
		return nil, nil, fmt.Errorf("data: validation fraction %v must be in [0, 1)", valFraction)
	}
	n := len(d.Pairs)
	nv := int(valFraction*float64(n) + 0.5)
	if valFraction > 0 && nv == 0 {
		nv = 1
	}
	if nv >= n && nv > 0 {
		return nil, nil, fmt.Errorf("data: cannot split %d pairs into training and validation by %v", n, valFraction)
	}
	perm := permutation(n, rand.New(rand.NewPCG(seed, splitStream)))
	isVal := make([]bool, n)
	for _, i := range perm[:nv] {
		isVal[i] = true
	}
	train = &Dataset{Dir: d.Dir, Rig: d.Rig, Truth: d.Truth}
	val = &Dataset{Dir: d.Dir, Rig: d.Rig, Truth: d.Truth}
	for i, p := range d.Pairs {
		if isVal[i] {
			val.Pairs = append(val.Pairs, p)
		} else {
			train.Pairs = append(train.Pairs, p)
		}
	}
	return train, val, nil
}

// Stream constants keep the generators for different purposes apart.
const (
	splitStream   = 0x73706c6974
	shuffleStream = 0x73687566
	augmentStream = 0x61756700
)

// permutation returns a Fisher–Yates shuffle of 0 … n−1. It is written out
// (rather than rand.Shuffle) so that the order is fixed by this code alone.
func permutation(n int, r *rand.Rand) []int {
	p := make([]int, n)
	for i := range p {
		p[i] = i
	}
	for i := n - 1; i > 0; i-- {
		j := int(r.Uint64() % uint64(i+1)) // bias below 2^-40 for any real dataset
		p[i], p[j] = p[j], p[i]
	}
	return p
}
