// Command embed is the frame loop to copy: depth per image, nearest point ahead.
package main

import (
	"context"
	"fmt"
	"log"
	"math"
	"os"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/demo"
)

func main() {
	rig, err := demo.Rig() // your cameras: depth.LoadRig("rig.json")
	must(err)
	est, err := model.NewEstimator(nil, &model.EstimatorOptions{Rig: rig}) // nil: the embedded weights
	must(err)
	frames := dataset.Frames(append(os.Args[1:], "")[0]) // the images of a folder, in name order
	if len(os.Args) < 2 {
		// No folder: the demo image.
		img, err := demo.Left()
		frames = func(yield func(dataset.Frame, error) bool) { yield(dataset.Frame{Name: demo.Name, Image: img}, err) }
	}
	for f, err := range frames {
		must(err)
		e, err := est.Estimate(context.Background(), f.Image)
		must(err)
		b, near := e.Depth.Rect, float32(math.Inf(1)) // nearest valid depth in the central third
		for y := b.Dy() / 3; y < 2*b.Dy()/3; y++ {
			for x := b.Dx() / 3; x < 2*b.Dx()/3; x++ {
				if z, ok := e.Depth.At(x, y); ok {
					near = min(near, z)
				}
			}
		}
		fmt.Printf("%s: nearest point ahead %.2f m (estimated depth is not a safety-rated sensor)\n", f.Name, near)
	}
}

func must(err error) {
	if err != nil {
		log.Fatal(err)
	}
}
