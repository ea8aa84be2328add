package synth

import (
	"fmt"
	"testing"
)

// benchmarkGenerate renders pairs of the style at the given size with the
// variation, one pair per iteration, on one goroutine.
func benchmarkGenerate(b *testing.B, style Style, vary Variation, w, h int) {
	b.ReportAllocs()
	opt := &Options{Width: w, Height: h, Vary: vary}
	cpu0, ok := processCPU()
	n := 0
	for b.Loop() {
		if _, err := Generate(style, 1, n%16, opt); err != nil {
			b.Fatal(err)
		}
		n++
	}
	if cpu1, ok1 := processCPU(); ok && ok1 && n > 0 {
		b.ReportMetric(float64(cpu1-cpu0)/float64(n), "cpu-ns/op")
	}
}

// BenchmarkGenerate renders each style as Generate does by default, and
// the unvaried styles varied too (the cost of the capture effects).
func BenchmarkGenerate(b *testing.B) {
	for _, st := range Styles {
		b.Run(fmt.Sprintf("%s/256x128", st), func(b *testing.B) { benchmarkGenerate(b, st, VaryDefault, 256, 128) })
	}
	for _, st := range []Style{Greenhouse, Storage} {
		b.Run(fmt.Sprintf("%s/varied/256x128", st), func(b *testing.B) { benchmarkGenerate(b, st, VaryAll, 256, 128) })
	}
	b.Run("orchard/varied/640x480", func(b *testing.B) { benchmarkGenerate(b, Orchard, VaryAll, 640, 480) })
}

// BenchmarkWriteDataset writes 16 greenhouse pairs at 256×128 per iteration
// (render, encode, atomic writes) with the default number of workers; the
// pair/s and cpu-ns/pair metrics give the time for 1,000 pairs.
func BenchmarkWriteDataset(b *testing.B) {
	b.ReportAllocs()
	const pairs = 16
	dir := b.TempDir()
	cpu0, ok := processCPU()
	n := 0
	for b.Loop() {
		if err := WriteDataset(dir, Greenhouse, 1, pairs, nil); err != nil {
			b.Fatal(err)
		}
		n++
	}
	b.ReportMetric(float64(n*pairs)/b.Elapsed().Seconds(), "pairs/s")
	if cpu1, ok1 := processCPU(); ok && ok1 && n > 0 {
		b.ReportMetric(float64(cpu1-cpu0)/float64(n*pairs), "cpu-ns/pair")
	}
}

// BenchmarkGenerateFrame renders frames of a two-leg drive at 256×128, one
// frame per iteration, on one goroutine (leg planning included).
func BenchmarkGenerateFrame(b *testing.B) {
	b.ReportAllocs()
	d := &Drive{Seed: 1, Legs: []Leg{{Greenhouse, 8}, {Storage, 8}}}
	opt := &Options{Width: 256, Height: 128}
	cpu0, ok := processCPU()
	n := 0
	for b.Loop() {
		if _, err := GenerateFrame(d, n%16, opt); err != nil {
			b.Fatal(err)
		}
		n++
	}
	if cpu1, ok1 := processCPU(); ok && ok1 && n > 0 {
		b.ReportMetric(float64(cpu1-cpu0)/float64(n), "cpu-ns/op")
	}
}
