package model

import (
	"runtime"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
)

func heapAlloc() uint64 {
	runtime.GC()
	runtime.GC()
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return m.HeapAlloc
}

// The heap one Net of the default network may take (NewNet and a Forward
// call), issue 12 items 1–2: 100 MB at 256×128 and 523 MB at 640×480 with
// a buffer per tensor and the convolutions' gradient workspaces; measured
// 14.7 MB and 111 MB with the liveness plan, forward-only convolutions and
// one shared padded-input and packed-weight buffer.
var maxNetBytes = map[[2]int]uint64{{256, 128}: 20 << 20, {640, 480}: 120 << 20}

// TestNetMemory measures the heap (HeapAlloc delta) of one Net of the
// default network at 256×128 and 640×480 (skipped with -short), and checks
// that the lean Net gives the same bits as one that keeps every tensor and
// owns its workspaces.
func TestNetMemory(t *testing.T) {
	w, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	sizes := [][2]int{{256, 128}, {640, 480}}
	if testing.Short() {
		sizes = sizes[:1]
	}
	for _, sz := range sizes {
		c := w.Config
		c.Width, c.Height = sz[0], sz[1]
		ww := &Weights{Config: c, Params: w.Params}
		in := planar.New(1, 3, sz[1], sz[0])
		for i := range in.Pix {
			in.Pix[i] = float32(i%251) / 250
		}
		h0 := heapAlloc()
		net, err := NewNet(ww, 1)
		if err != nil {
			t.Fatal(err)
		}
		outs, err := net.Forward(in)
		if err != nil {
			t.Fatal(err)
		}
		used := heapAlloc() - h0
		t.Logf("one Net at %dx%d: %.1f MB of heap, %.1f MB of it activations", sz[0], sz[1], float64(used)/1e6, float64(bufferBytes(net.bufs))/1e6)
		if used > maxNetBytes[sz] {
			t.Errorf("one Net at %dx%d takes %.1f MB, more than %d MB", sz[0], sz[1], float64(used)/1e6, maxNetBytes[sz]>>20)
		}
		if sz[0] != 256 {
			continue
		}
		ref, err := NewInspectNet(ww, 1)
		if err != nil {
			t.Fatal(err)
		}
		want, err := ref.Forward(in)
		if err != nil {
			t.Fatal(err)
		}
		for s := range outs {
			for i, v := range want[s].Pix {
				if outs[s].Pix[i] != v {
					t.Fatalf("scale %d, value %d: lean %v, every tensor kept %v", s, i, outs[s].Pix[i], v)
				}
			}
		}
		if net.Tensor("enc5b") != nil || ref.Tensor("enc5b") == nil || net.Tensor(net.Arch().Outputs[0]) == nil {
			t.Error("Tensor: a lean Net must give only its outputs, an inspecting Net every tensor")
		}
		runtime.KeepAlive(net)
	}
}
