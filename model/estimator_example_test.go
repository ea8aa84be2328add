package model_test

import (
	"context"
	"fmt"
	"log"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/demo"
)

func ExampleEstimator() {
	img, err := demo.Left() // any image.Image, any size
	if err != nil {
		log.Fatal(err)
	}
	rig, err := demo.Rig() // the cameras; depth.LoadRig reads a rig file
	if err != nil {
		log.Fatal(err)
	}
	est, err := model.NewEstimator(nil, &model.EstimatorOptions{Rig: rig, Flip: true}) // nil: the embedded weights
	if err != nil {
		log.Fatal(err)
	}
	e, err := est.Estimate(context.Background(), img)
	if err != nil {
		log.Fatal(err)
	}
	z, ok := e.Depth.At(128, 100) // metres; check the confidence before acting on it
	c, _ := e.Confidence.At(128, 100)
	fmt.Println(e.Depth.Rect, ok, z > 0, c >= 0 && c <= 1)
	// Output: (0,0)-(256,128) true true true
}
