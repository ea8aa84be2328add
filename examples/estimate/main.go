// Command estimate turns left camera images into metric depth with the
// embedded network (or a weights file): for each image it writes a 16-bit
// depth PNG in millimetres, a colour-mapped depth PNG and a short text
// summary, and on request PFM maps and a PLY point cloud.
//
//	go run ./examples/estimate                       # the bundled demo image
//	go run ./examples/estimate -rig rig.json -flip photos/ left.png
//
// Estimated depth is not a safety-rated sensor.
package main

import (
	"context"
	"flag"
	"fmt"
	"image"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/atomicfile"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/demo"
)

// defaultOut is the output folder when -out is not given.
const defaultOut = "parallax-estimates"

const caution = "Caution: estimated depth is not a safety-rated sensor. Its errors grow with distance and it fails\n" +
	"silently on glass, mirrors, textureless or repetitive surfaces, darkness and glare; a machine that\n" +
	"acts on it needs independent obstacle sensing."

type options struct {
	weights, rig, out string
	flip, pfm, ply    bool
	minConf           float64
	quiet             bool
}

func main() {
	var o options
	flag.StringVar(&o.weights, "weights", "", "weights file (safetensors, see package model); default: the embedded weights")
	flag.StringVar(&o.rig, "rig", "", "rig JSON file of the camera (see depth.ReadRig), rescaled to each image's size; an image\nof another aspect ratio (±1%) is an error. Default: the rig of the bundled demo, which the\nembedded weights were made for")
	flag.StringVar(&o.out, "out", defaultOut, "output folder, created if missing; files of the same names are replaced")
	flag.BoolVar(&o.flip, "flip", false, "flip post-processing: also predict the mirrored image and blend (twice the time)")
	flag.BoolVar(&o.pfm, "pfm", false, "also write NAME.disparity.pfm (pixels), NAME.depth.pfm (metres) and NAME.confidence.pfm")
	flag.BoolVar(&o.ply, "ply", false, "also write NAME.points.ply, a coloured point cloud in metres (binary little-endian)")
	flag.Float64Var(&o.minConf, "min-confidence", 0, "mark pixels whose left-right confidence is below this value invalid in every output")
	flag.BoolVar(&o.quiet, "quiet", false, "print no progress bar and no summaries (warnings still go to stderr)")
	flag.Usage = func() {
		fmt.Fprintf(flag.CommandLine.Output(), `usage: estimate [flags] [image or folder ...]

Estimates depth from single left images (PNG or JPEG; folders are read in name
order). Without arguments it runs on the bundled demo image. For each image NAME
it writes into the output folder (default %s):

  NAME.depth-mm.png      16-bit grey depth in millimetres, 0 = no estimate
  NAME.depth-colour.png  depth colour-mapped by inverse depth (cubehelix, near is bright)
  NAME.summary.txt       size, time, depth range and median

%s

Flags:
`, defaultOut, caution)
		flag.PrintDefaults()
	}
	flag.Parse()
	if err := run(o, flag.Args(), os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

// input is one image to estimate: a file, or the demo when path is "".
type input struct{ name, path string }

func run(o options, args []string, stdout, stderr io.Writer) error {
	if o.minConf < 0 || o.minConf > 1 || o.minConf != o.minConf {
		return fmt.Errorf("estimate: -min-confidence %v must be in [0, 1]", o.minConf)
	}
	inputs, err := listInputs(args)
	if err != nil {
		return err
	}
	var w *model.Weights
	if o.weights != "" {
		if w, err = model.Load(o.weights); err != nil {
			return err
		}
	} else if w, err = model.Default(); err != nil {
		return err
	}
	var rig *depth.Rig
	if o.rig != "" {
		rig, err = depth.LoadRig(o.rig)
	} else {
		rig, err = demo.Rig()
		if len(args) > 0 {
			fmt.Fprintf(stderr, "estimate: no -rig given: assuming the demo camera (focal %.1f px at %d px width, baseline %.3f m);\n"+
				"          depth in metres is only right for that camera\n", rig.Fx, rig.Width, rig.Baseline)
		}
	}
	if err != nil {
		return err
	}
	// Without -rig the demo rig is only a guess, already warned about: it is
	// stretched to any image rather than refused.
	est, err := model.NewEstimator(w, &model.EstimatorOptions{Rig: rig, StretchRig: o.rig == "", Flip: o.flip})
	if err != nil {
		return err
	}
	if err := os.MkdirAll(o.out, 0o755); err != nil {
		return fmt.Errorf("estimate: %w", err)
	}
	bar := progress{w: stderr, n: len(inputs), on: len(inputs) > 1 && !o.quiet}
	ctx := context.Background()
	var first time.Duration
	for i, in := range inputs {
		bar.show(i, in.name)
		img, err := decode(in)
		if err != nil {
			bar.clear()
			return err
		}
		if o.rig != "" {
			if err := rig.CheckAspect(img.Bounds().Dx(), img.Bounds().Dy()); err != nil {
				bar.clear()
				return fmt.Errorf("estimate: %s and %s: %w", in.name, o.rig, err)
			}
		}
		start := time.Now()
		e, err := est.Estimate(ctx, img)
		elapsed := time.Since(start)
		if i == 0 && err == nil {
			// The first call also sets up buffers; time a second one so that
			// the summary shows the cost per image.
			first = elapsed
			start = time.Now()
			e, err = est.Estimate(ctx, img)
			elapsed = time.Since(start)
		}
		if err != nil {
			bar.clear()
			return fmt.Errorf("estimate: %s: %w", in.name, err)
		}
		if o.minConf > 0 {
			e.Confidence.Threshold(&e.Disparity.Map, float32(o.minConf))
			e.Confidence.Threshold(&e.Depth.Map, float32(o.minConf))
		}
		sum, err := write(o, in, img, e, elapsed, first, w)
		if err != nil {
			bar.clear()
			return err
		}
		if !o.quiet && len(inputs) == 1 {
			fmt.Fprint(stdout, sum)
		}
	}
	bar.clear()
	if !o.quiet {
		if len(inputs) > 1 {
			fmt.Fprintf(stdout, "%d images estimated\n%s\n", len(inputs), caution)
		}
		fmt.Fprintf(stdout, "output folder: %s\n", o.out)
	}
	return nil
}

// listInputs expands the arguments: files as given, folders into their PNG
// and JPEG files in name order, nothing into the demo image.
func listInputs(args []string) ([]input, error) {
	if len(args) == 0 {
		return []input{{name: demo.Name}}, nil
	}
	var out []input
	seen := map[string]string{}
	add := func(path string) error {
		name := strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
		if prev, dup := seen[name]; dup {
			return fmt.Errorf("estimate: %s and %s would write the same output files (%s.*)", prev, path, name)
		}
		seen[name] = path
		out = append(out, input{name: name, path: path})
		return nil
	}
	for _, a := range args {
		fi, err := os.Stat(a)
		if err != nil {
			return nil, fmt.Errorf("estimate: %w", err)
		}
		if !fi.IsDir() {
			if err := add(a); err != nil {
				return nil, err
			}
			continue
		}
		names, err := dataset.ImageFiles(a)
		if err != nil {
			return nil, fmt.Errorf("estimate: %w", err)
		}
		if len(names) == 0 {
			return nil, fmt.Errorf("estimate: folder %s holds no PNG or JPEG image", a)
		}
		for _, n := range names {
			if err := add(filepath.Join(a, n)); err != nil {
				return nil, err
			}
		}
	}
	return out, nil
}

func decode(in input) (image.Image, error) {
	if in.path == "" {
		return demo.Left()
	}
	img, err := dataset.LoadImage(in.path)
	if err != nil {
		return nil, fmt.Errorf("estimate: %w", err)
	}
	return img, nil
}

// write saves the files of one image and returns its summary text.
func write(o options, in input, img image.Image, e *model.Estimate, elapsed, first time.Duration, w *model.Weights) (string, error) {
	base := filepath.Join(o.out, in.name)
	dropped, err := depth.SavePNG16(base+".depth-mm.png", e.Depth)
	if err != nil {
		return "", err
	}
	var sum strings.Builder
	b := e.Depth.Rect
	src := in.path
	if src == "" {
		src = "bundled demo image (synthetic greenhouse aisle)"
	}
	fmt.Fprintf(&sum, "image        %s\n", src)
	fmt.Fprintf(&sum, "size         %d x %d px (network input %d x %d)\n", b.Dx(), b.Dy(), w.Config.Width, w.Config.Height)
	ms := func(d time.Duration) float64 { return float64(d.Microseconds()) / 1000 }
	flip := ""
	if o.flip {
		flip = ", with flip post-processing"
	}
	fmt.Fprintf(&sum, "time         %.1f ms per image (the Estimate call%s; the first call took %.1f ms)\n", ms(elapsed), flip, ms(first))
	weights := "embedded"
	if o.weights != "" {
		weights = o.weights
	}
	if st := w.Provenance[model.ProvenanceStatus]; st != "" {
		weights += " (" + st + ")"
	}
	fmt.Fprintf(&sum, "weights      %s\n", weights)
	zs := validValues(&e.Depth.Map)
	if len(zs) == 0 {
		fmt.Fprintf(&sum, "depth        no valid pixel\n")
	} else {
		slices.Sort(zs)
		med := zs[len(zs)/2]
		if len(zs)%2 == 0 {
			med = (zs[len(zs)/2-1] + zs[len(zs)/2]) / 2
		}
		fmt.Fprintf(&sum, "depth range  %.3f … %.3f m over %d of %d pixels\n", zs[0], zs[len(zs)-1], len(zs), b.Dx()*b.Dy())
		fmt.Fprintf(&sum, "median depth %.3f m\n", med)
		// Coloured linearly in disparity (inverse depth): near detail stays
		// visible, and a few far outliers cannot wash the image out as they
		// do on a linear depth scale.
		colour, err := depth.ColorDisparity(e.Disparity, nil)
		if err != nil {
			return "", err
		}
		if err := depth.SavePNG(base+".depth-colour.png", colour); err != nil {
			return "", err
		}
	}
	if dropped > 0 {
		fmt.Fprintf(&sum, "note         %d pixels outside 1 mm … 65.535 m are 0 in the 16-bit PNG\n", dropped)
	}
	conf := validValues(&e.Confidence.Map)
	low := 0
	for _, c := range conf {
		if c < 0.5 {
			low++
		}
	}
	fmt.Fprintf(&sum, "confidence   %d of %d pixels below 0.5 (left-right disagreement)\n", low, len(conf))
	fmt.Fprintf(&sum, "files        %s.depth-mm.png, %s.depth-colour.png", in.name, in.name)
	if o.pfm {
		for _, m := range []struct {
			suffix string
			m      *depth.Map
		}{{".disparity.pfm", &e.Disparity.Map}, {".depth.pfm", &e.Depth.Map}, {".confidence.pfm", &e.Confidence.Map}} {
			if err := depth.SavePFM(base+m.suffix, m.m.Pix, m.m.Rect.Dx(), m.m.Rect.Dy(), 1); err != nil {
				return "", err
			}
			fmt.Fprintf(&sum, ", %s%s", in.name, m.suffix)
		}
	}
	if o.ply {
		pc, err := depth.PointCloudFromDepth(e.Depth, img, e.Rig)
		if err != nil {
			return "", err
		}
		if err := depth.SavePLY(base+".points.ply", pc, depth.PLYBinary); err != nil {
			return "", err
		}
		fmt.Fprintf(&sum, ", %s.points.ply", in.name)
	}
	fmt.Fprintf(&sum, ", %s.summary.txt\n%s\n", in.name, caution)
	if err := atomicfile.WriteBytes(base+".summary.txt", "estimate", []byte(sum.String())); err != nil {
		return "", err
	}
	return sum.String(), nil
}

// validValues returns the values of m's valid pixels.
func validValues(m *depth.Map) []float32 {
	var v []float32
	w := m.Rect.Dx()
	for y := range m.Rect.Dy() {
		for x := range w {
			if i := y*m.Stride + x; m.Mask[i] != 0 {
				v = append(v, m.Pix[i])
			}
		}
	}
	return v
}

// progress draws a one-line bar on a terminal-like writer.
type progress struct {
	w  io.Writer
	n  int
	on bool
}

func (p progress) show(i int, name string) {
	if !p.on {
		return
	}
	const width = 30
	k := i * width / p.n
	fmt.Fprintf(p.w, "\r[%s%s] %d/%d %-24.24s", strings.Repeat("=", k), strings.Repeat(" ", width-k), i, p.n, name)
}

func (p progress) clear() {
	if p.on {
		fmt.Fprintf(p.w, "\r[%s] %d/%d %-24s\n", strings.Repeat("=", 30), p.n, p.n, "done")
	}
}
