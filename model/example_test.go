package model_test

import (
	"fmt"

	"github.com/parallaxdepth/parallax/model"
)

func ExampleBuild() {
	a, err := model.Build(model.Config{}) // the defaults: 256×128 input
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("parameters:", a.NumParams())
	for s, name := range a.Outputs {
		sh, _ := a.Shape(name)
		fmt.Printf("scale %d: %s %v\n", s, name, sh)
	}
	// Output:
	// parameters: 929352
	// scale 0: disp0 2x128x256
	// scale 1: disp1 2x64x128
	// scale 2: disp2 2x32x64
	// scale 3: disp3 2x16x32
}

func ExampleDMax() {
	// A 640-pixel-wide camera with a 700-pixel focal length and a 12 cm
	// baseline, for objects no nearer than 0.5 m.
	d, err := model.DMax(700, 0.12, 0.5, 640)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("d_max = %.4f of the width (%.0f pixels)\n", d, d*640)
	// Output:
	// d_max = 0.2625 of the width (168 pixels)
}
