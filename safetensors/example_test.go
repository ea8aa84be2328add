package safetensors_test

import (
	"bytes"
	"fmt"

	"github.com/parallaxdepth/parallax/safetensors"
)

func ExampleWrite() {
	ts := []safetensors.Tensor{
		{Name: "w", Shape: []int{2, 2}, Data: []float32{1, 2, 3, 1.0 / 3}},
		{Name: "step", Shape: []int{}, Data: []float32{7}},
	}
	var buf bytes.Buffer
	if err := safetensors.Write(&buf, ts, map[string]string{"note": "example"}, safetensors.F16); err != nil {
		fmt.Println(err)
		return
	}
	got, meta, err := safetensors.Parse(buf.Bytes())
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(meta["note"])
	for _, t := range got {
		fmt.Println(t.Name, t.DType, t.Shape, t.Data)
	}
	// Output:
	// example
	// step F16 [] [7]
	// w F16 [2 2] [1 2 3 0.33325195]
}

func ExampleFloat16Bits() {
	for _, f := range []float32{1, 65504, 1.0 / 3} {
		h := safetensors.Float16Bits(f)
		fmt.Printf("%v -> %#04x -> %v\n", f, h, safetensors.Float16From(h))
	}
	// Output:
	// 1 -> 0x3c00 -> 1
	// 65504 -> 0x7bff -> 65504
	// 0.33333334 -> 0x3555 -> 0.33325195
}
