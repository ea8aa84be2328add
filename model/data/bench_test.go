package data

import (
	"context"
	"errors"
	"io"
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
)

func benchmarkEpoch(b *testing.B, width, height int, aug *Augment) {
	ds, err := dataset.Open(filepath.Join("..", "..", "testdata", "synth", "storage"))
	if err != nil {
		b.Fatal(err)
	}
	l, err := NewLoader(ds, &Options{Width: width, Height: height, BatchSize: 3, Shuffle: true, Augment: aug})
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		it := l.Epoch(context.Background(), i)
		for {
			_, err := it.Next()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				b.Fatal(err)
			}
		}
		it.Close()
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*len(ds.Pairs)), "ns/pair")
}

// Three 256×128 pairs with full ground truth per epoch.
func BenchmarkEpochNative(b *testing.B)    { benchmarkEpoch(b, 256, 128, nil) }
func BenchmarkEpochAugment(b *testing.B)   { benchmarkEpoch(b, 256, 128, &DefaultAugment) }
func BenchmarkEpochDownscale(b *testing.B) { benchmarkEpoch(b, 128, 64, nil) }
