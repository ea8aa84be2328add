package data_test

import (
	"context"
	"fmt"
	"io"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model/data"
)

func Example() {
	ds, err := dataset.Open("../../testdata/synth/greenhouse")
	if err != nil {
		fmt.Println(err)
		return
	}
	train, val, err := data.Split(ds, 0.34, 1)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("pairs:", len(ds.Pairs), "train:", len(train.Pairs), "validation:", len(val.Pairs))
	fmt.Println("truth:", ds.Truth)

	l, err := data.NewLoader(train, &data.Options{Width: 128, Height: 64, BatchSize: 2, Shuffle: true, Seed: 7, Augment: &data.DefaultAugment})
	if err != nil {
		fmt.Println(err)
		return
	}
	it := l.Epoch(context.Background(), 0)
	defer it.Close()
	for {
		b, err := it.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			fmt.Println(err)
			return
		}
		fmt.Println("batch", b.Left.Shape(), "disparity", b.DispLeft.Shape())
	}
	// Output:
	// pairs: 3 train: 2 validation: 1
	// truth: [disp_left disp_right depth_left occ_left occ_right]
	// batch 2x3x64x128 disparity 2x1x64x128
}
