package synth_test

import (
	"fmt"
	"log"
	"os"
	"path/filepath"

	"github.com/parallaxdepth/parallax/synth"
)

// Generate renders one pair in memory; disparity is a fraction of the
// width, so d·W pixels, and d·W = f·B/Z at every pixel.
func ExampleGenerate() {
	p, err := synth.Generate(synth.Storage, 1, 0, &synth.Options{Width: 64, Height: 32})
	if err != nil {
		log.Fatal(err)
	}
	r := p.Rig
	i := 16*r.Width + 32 // pixel (32, 16)
	dpx := float64(p.DispLeft.Pix[i]) * float64(r.Width)
	z := float64(p.DepthLeft.Pix[i])
	fmt.Printf("%s rig: %dx%d, focal %.2f px, baseline %.2f m\n", synth.Storage, r.Width, r.Height, r.Fx, r.Baseline)
	fmt.Printf("d·Z/(f·B) = %.4f\n", dpx*z/(r.Fx*r.Baseline))
	// Output:
	// storage rig: 64x32, focal 55.43 px, baseline 0.10 m
	// d·Z/(f·B) = 1.0000
}

// WriteDataset writes pairs in the folder layout the training loader reads.
func ExampleWriteDataset() {
	dir, err := os.MkdirTemp("", "synth")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)
	if err := synth.WriteDataset(dir, synth.Greenhouse, 1, 1, &synth.Options{Width: 32, Height: 16}); err != nil {
		log.Fatal(err)
	}
	filepath.WalkDir(dir, func(path string, d os.DirEntry, err error) error {
		if err == nil && !d.IsDir() {
			rel, _ := filepath.Rel(dir, path)
			fmt.Println(filepath.ToSlash(rel))
		}
		return err
	})
	// Output:
	// left/000000.png
	// rig.json
	// right/000000.png
	// truth/depth_left/000000.pfm
	// truth/disp_left/000000.pfm
	// truth/disp_right/000000.pfm
	// truth/occ_left/000000.png
	// truth/occ_right/000000.png
}
